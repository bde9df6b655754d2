"""Webhook delivery by the stand-in, received by a tiny tornado server.

The receiving side checks the secret with bot.adapter.webhook_guard.

Outside reference: Telegram Bot API spec, bot/sandbox/botapi/api.json, setWebhook:
updates arrive as an HTTPS POST with a JSON-serialised Update, the header
"X-Telegram-Bot-Api-Secret-Token" carries secret_token, and a non-2XY answer is repeated.
All servers listen on 127.0.0.1 only; every wait is bounded. The flat is invented.
"""

from __future__ import annotations

import json
from collections.abc import AsyncIterator
from dataclasses import dataclass, field
from typing import Any

import pytest
from telegram import Bot
from tornado.httpclient import AsyncHTTPClient, HTTPRequest
from tornado.httpserver import HTTPServer
from tornado.netutil import bind_sockets
from tornado.web import Application, RequestHandler

from bot.adapter.webhook_guard import SECRET_HEADER, check_secret_token, verify
from bot.sandbox import BotApiStandIn, SimChat, SimUser

SECRET = "wren-yard_7-secret"


@dataclass
class Receiver:
    """One "bot process": accepts updates whose secret matches; can fail the first N posts."""

    secret: str
    fail_first: int = 0
    accepted: list[dict[str, Any]] = field(default_factory=list)
    refused: list[str] = field(default_factory=list)
    posts: int = 0
    url: str = ""


class _Hook(RequestHandler):
    def initialize(self, receiver: Receiver) -> None:
        self.receiver = receiver

    def post(self) -> None:
        self.receiver.posts += 1
        verdict = verify(self.request.headers, self.receiver.secret)
        if not verdict.ok:  # refused before the body is looked at
            self.receiver.refused.append(verdict.reason)
            self.set_status(verdict.status)
            self.finish()
            return
        if self.receiver.fail_first > 0:
            self.receiver.fail_first -= 1
            self.set_status(500)
            self.finish()
            return
        self.receiver.accepted.append(json.loads(self.request.body))
        self.finish()


@pytest.fixture
async def receivers() -> AsyncIterator[list[Receiver]]:
    """Two receivers on ephemeral 127.0.0.1 ports (two bot processes)."""
    made: list[Receiver] = []
    servers: list[HTTPServer] = []
    for _ in range(2):
        receiver = Receiver(SECRET)
        sockets = bind_sockets(0, "127.0.0.1")
        server = HTTPServer(Application([(r"/hook", _Hook, {"receiver": receiver})]))
        server.add_sockets(sockets)
        receiver.url = f"http://127.0.0.1:{sockets[0].getsockname()[1]}/hook"
        made.append(receiver)
        servers.append(server)
    yield made
    for server in servers:
        server.stop()
        await server.close_all_connections()


@pytest.fixture
def flat(standin: BotApiStandIn) -> tuple[SimChat, SimUser]:
    ines = standin.world.add_user("Ines")
    tomasz = standin.world.add_user("Tomasz")
    group = standin.world.add_group("7 Wren Yard", [ines, tomasz])
    return group, ines


def texts(receiver: Receiver) -> list[str]:
    return [u["message"]["text"] for u in receiver.accepted]


async def test_updates_are_posted_with_the_secret_header(
    standin: BotApiStandIn, bot: Bot, receivers: list[Receiver], flat: tuple[SimChat, SimUser]
) -> None:
    group, ines = flat
    assert await bot.set_webhook(receivers[0].url, secret_token=SECRET)
    standin.world.user_says(ines, group, "/newround")
    standin.world.user_says(ines, group, "/join")
    await standin.wait_for(lambda: len(receivers[0].accepted) == 2 or None)
    assert texts(receivers[0]) == ["/newround", "/join"]  # in order, each once
    assert receivers[0].refused == []
    info = await bot.get_webhook_info()
    assert info.url == receivers[0].url and info.pending_update_count == 0


async def test_a_wrong_secret_is_refused_and_nothing_is_accepted(
    standin: BotApiStandIn, bot: Bot, receivers: list[Receiver], flat: tuple[SimChat, SimUser]
) -> None:
    group, ines = flat
    standin.webhook.max_attempts = 3
    await bot.set_webhook(receivers[0].url, secret_token="someone-elses-token")
    standin.world.user_says(ines, group, "/newround")
    await standin.wait_for(lambda: standin.webhook.given_up or None)
    assert receivers[0].accepted == []
    assert receivers[0].refused == ["wrong X-Telegram-Bot-Api-Secret-Token header"] * 3
    assert [a.status for a in standin.webhook.attempts] == [403, 403, 403]


async def test_a_missing_secret_is_refused(receivers: list[Receiver]) -> None:
    forged = {"update_id": 1, "message": {"message_id": 1, "date": 0, "text": "/cancel"}}
    request = HTTPRequest(receivers[0].url, method="POST", body=json.dumps(forged))
    response = await AsyncHTTPClient().fetch(request, raise_error=False)
    assert response.code == 403
    assert receivers[0].accepted == [] and receivers[0].refused == [f"no {SECRET_HEADER} header"]


async def test_a_failed_delivery_is_repeated_until_accepted(
    standin: BotApiStandIn, bot: Bot, receivers: list[Receiver], flat: tuple[SimChat, SimUser]
) -> None:
    group, ines = flat
    receivers[0].fail_first = 2
    await bot.set_webhook(receivers[0].url, secret_token=SECRET)
    standin.world.user_says(ines, group, "/newround")
    await standin.wait_for(lambda: receivers[0].accepted or None)
    assert [a.status for a in standin.webhook.attempts] == [500, 500, 200]
    assert texts(receivers[0]) == ["/newround"]


async def test_deliveries_alternate_between_two_processes(
    standin: BotApiStandIn, bot: Bot, receivers: list[Receiver], flat: tuple[SimChat, SimUser]
) -> None:
    group, ines = flat
    first, second = receivers
    await bot.set_webhook(first.url, secret_token=SECRET)
    standin.webhook.alternate_with(second.url)
    said = [f"/status {n}" for n in range(6)]
    for text in said:
        standin.world.user_says(ines, group, text)
    await standin.wait_for(lambda: len(first.accepted) + len(second.accepted) == 6 or None)
    assert texts(first) == said[0::2] and texts(second) == said[1::2]


async def test_delete_webhook_stops_delivery_and_polling_works_again(
    standin: BotApiStandIn, bot: Bot, receivers: list[Receiver], flat: tuple[SimChat, SimUser]
) -> None:
    group, ines = flat
    await bot.set_webhook(receivers[0].url, secret_token=SECRET)
    await bot.delete_webhook()
    standin.world.user_says(ines, group, "/newround")
    updates = await bot.get_updates(timeout=0)
    assert [u.message.text for u in updates if u.message] == ["/newround"]
    assert receivers[0].posts == 0


@pytest.mark.parametrize("secret", ["", "has space", "x" * 257, "ünïcode", "semi;colon"])
def test_secret_tokens_telegram_would_refuse_are_refused_with_advice(secret: str) -> None:
    # Bot API spec, setWebhook.secret_token: 1-256 characters of A-Z, a-z, 0-9, _ and -.
    with pytest.raises(ValueError, match="token_urlsafe"):
        check_secret_token(secret)


def test_header_names_are_case_insensitive() -> None:
    # RFC 9110 section 5.1: field names are case-insensitive.
    assert verify({SECRET_HEADER.lower(): SECRET}, SECRET).ok
    assert check_secret_token("A-z_0" * 51 + "9") == "A-z_0" * 51 + "9"
