"""Webhook mode for real: the stand-in POSTs updates to two bot processes in turn.

Outside references: the Telegram Bot API spec (setWebhook: updates arrive as HTTP POSTs of a
JSON ``Update``, with the header ``X-Telegram-Bot-Api-Secret-Token`` when a secret was set),
checked call by call by the stand-in (fixture ``standin``). The flat and its people are
invented (harness.py).
"""

from __future__ import annotations

import json
import socket
from contextlib import AsyncExitStack
from pathlib import Path

import httpx

from bot.adapter.application import Webhook, running
from bot.adapter.webhook_guard import SECRET_HEADER
from bot.sandbox import BotApiStandIn
from bot.storage.sqlite import SqliteStore
from tests.adapter.harness import ROOMS, Flat, app_for, runtime

SECRET = "sorrel-lane-hook-secret"


def _free_port() -> int:
    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        return int(probe.getsockname()[1])


def _hook(port: int) -> Webhook:
    return Webhook("127.0.0.1", port, f"http://127.0.0.1:{port}/telegram", SECRET)


async def _dump(db_path: Path) -> dict[str, list[tuple[object, ...]]]:
    store = await SqliteStore.open(db_path)
    try:
        return await store.dump()
    finally:
        await store.close()


async def test_two_bot_processes_share_a_round_over_webhooks(
    standin: BotApiStandIn, db_path: Path
) -> None:
    flat = Flat.invent(standin, db_path, size=3, rent=1_500_00, seed=8)
    first, second = _hook(_free_port()), _hook(_free_port())
    async with AsyncExitStack() as stack:
        apps = [app_for(standin, db_path), app_for(standin, db_path)]
        await stack.enter_async_context(running(apps[0], webhook=first))
        await stack.enter_async_context(running(apps[1], webhook=second))
        standin.webhook.alternate_with(first.url)  # like two processes behind one balancer
        flat.standin.world.user_says(
            flat.admin, flat.group, f"/newround 1500.00 EUR; {', '.join(ROOMS[:3])}; tolerance 10"
        )
        opened = await flat.wait_group("The round is open")
        join = next(b for row in opened.buttons() for b in row if b.text == "Count me in")
        assert join.callback_data is not None
        for person in flat.people:
            await flat.press(person, opened, join.callback_data)
        await flat.wait_group("Every room has a member now")
        flat.standin.world.user_says(flat.admin, flat.group, "/begin")
        await flat.wait_group("Everyone is in")
        settled = await flat.play_until_settled()
        assert settled is not None
        # both processes received updates, and every update went to exactly one of them
        to_first, to_second = (
            standin.webhook.delivered(first.url),
            standin.webhook.delivered(second.url),
        )
        assert to_first and to_second
        assert not set(to_first) & set(to_second)
        assert "which matches the rent" in (settled.text or settled.caption or "")
        # a request with a wrong or missing secret is refused and changes nothing
        for app in apps:  # presses are answered before their messages go out: let them go
            assert await runtime(app).delivery.flush()
        before = await _dump(db_path)
        forged = {
            "update_id": 10**9,
            "message": {
                "message_id": 1,
                "date": 0,
                "chat": {"id": flat.group.id, "type": "supergroup"},
                "text": "/cancelround",
            },
        }
        async with httpx.AsyncClient() as client:
            for headers in ({SECRET_HEADER: "not-the-secret"}, {}):
                reply = await client.post(
                    first.url,
                    content=json.dumps(forged),
                    headers={"Content-Type": "application/json", **headers},
                )
                assert reply.status_code == 403
        assert await _dump(db_path) == before
    # each stored question reached its member exactly once, although two processes shared
    # the outbox (claims)
    dump = await _dump(db_path)
    sent_questions = [
        m
        for person in flat.people
        for m in standin.world.messages_in(standin.world.private_chat_of(person))
        if m.from_bot and (m.text or "").startswith(("Question ", "Round "))
    ]
    assert len(sent_questions) == len(dump["questions"])
    assignment, prices = await flat.agreement()
    assert sum(prices) == flat.rent
    for user_id, room in assignment.items():
        assert flat.tenants[int(user_id)].envy(prices, room) <= 10_00 + 1e-6
