"""A plain round's group chat stays quiet: few new messages, in a fixed order, within budget.

A 4-member round without objections posts at most five new group messages: the live status
(opened, then rewritten as people join, answer and agree), the picture, the suggested split,
and the written agreement's two files, the first carrying the outcome. Everything else is an
edit. Outside references: the Telegram Bot API spec (the stand-in checks every call against
bot/sandbox/botapi/api.json; Bot API methods that post start with "send", those that change a
post start with "edit"); about 20 posts and edits a minute per group is common practice
(Telegram's bot FAQ, from memory), and the round runs with that default budget.
"""

from __future__ import annotations

from pathlib import Path

from bot.adapter.application import build_application, running
from bot.demo.standin_settings import settings_for
from bot.rounds.caution import CAUTION
from bot.sandbox import BotApiStandIn, SimMessage
from tests.adapter.harness import Flat, outbox_rows
from tests.adapter.test_rounds import check_agreement, set_up_and_join

#: The issue's target for a 4-member round without objections.
MOST_NEW_GROUP_MESSAGES = 5
#: Common practice (from memory): about 20 posts and edits a minute in one group.
GROUP_BUDGET_PER_MINUTE = 20


def label(message: SimMessage) -> str:
    """What a group message is, as a reader would say it."""
    if message.photo is not None:
        return "picture"
    if message.document is not None:
        caption = message.caption or ""
        return "outcome file" if caption.startswith("Everyone agreed") else "file"
    text = message.text or ""
    if any(b.text == "Agree" for row in message.buttons() for b in row) or text.startswith(
        "Suggested split"
    ):
        return "proposal"
    return "status"


def most_in_any_minute(times: list[float], period: float = 60.0) -> int:
    """The largest number of calls inside one half-open window of ``period`` seconds."""
    return max((sum(1 for t in times if s <= t < s + period) for s in times), default=0)


async def test_plain_four_member_round_posts_five_group_messages_in_order(
    standin: BotApiStandIn, db_path: Path
) -> None:
    flat = Flat.invent(standin, db_path, size=4, rent=2_000_00, seed=3)
    settings = settings_for(standin, db_path, group_messages_per_minute=GROUP_BUDGET_PER_MINUTE)
    async with running(build_application(settings)):
        await set_up_and_join(flat, "2000.00 EUR", "10")
        assert await flat.play_until_settled() is not None
        await check_agreement(flat, tolerance=10_00)
        world = standin.world
        await standin.wait_for(
            lambda: len([m for m in world.messages_in(flat.group) if m.document]) == 2 or None
        )
    outbox = await outbox_rows(db_path)
    assert not [r for r in outbox if r["kind"] == "objection-noted"]  # a plain round
    posted = [m for m in standin.world.messages_in(flat.group) if m.from_bot]
    assert len(posted) <= MOST_NEW_GROUP_MESSAGES
    assert [label(m) for m in posted] == ["status", "picture", "proposal", "outcome file", "file"]
    status, picture, proposal, outcome, _ = posted
    # The live status was rewritten into the start of asking, which tells the group the
    # expected number of rounds, the assumptions and the lapse date ...
    rewrites = [
        str(c.params["text"])
        for c in standin.calls
        if c.method == "editMessageText" and c.params.get("message_id") == status.message_id
    ]
    started = next(t for t in rewrites if t.startswith("Everyone is in"))
    assert "expect about" in started and "the round closes" in started
    assert "I assume that you would take a free room" in started
    # ... showed whom the round waited for while people answered and agreed ...
    assert any("Waiting for: " in t for t in rewrites)
    # ... and ends showing the round done, still with the assumptions.
    shown = status.text or ""
    assert shown.startswith("Done: everyone agreed")
    assert "I assume that you would take a free room" in shown
    # Wherever prices are shown, the caution is there (the proposal, the outcome, the picture).
    for message in (proposal, outcome, picture):
        assert CAUTION in (message.text or message.caption or "")
    # The proposal lost its buttons once everyone agreed.
    assert proposal.buttons() == []
    # Every post and edit in the group (Bot API: methods named send... and edit...) ...
    on_screen = [
        call.at
        for call in standin.calls
        if call.method.startswith(("send", "edit"))
        and call.method != "sendChatAction"
        and call.params.get("chat_id") in (flat.group.id, str(flat.group.id))
        and call.status == 200
    ]
    # ... is paced: no minute holds more than the budget ...
    assert most_in_any_minute(on_screen) <= GROUP_BUDGET_PER_MINUTE
    # ... and the whole round, played as fast as the flatmates can tap, needs no more than
    # one minute's budget, so the group never waits for pacing (a count, not a timing).
    assert len(on_screen) <= GROUP_BUDGET_PER_MINUTE


async def test_the_picture_goes_out_before_anyone_agrees(
    standin: BotApiStandIn, db_path: Path
) -> None:
    flat = Flat.invent(standin, db_path, size=4, rent=2_000_00, seed=3)
    async with running(build_application(settings_for(standin, db_path))):
        await set_up_and_join(flat, "2000.00 EUR", "10")
        assert await flat.play_until_settled() is not None
    photos = [c for c in standin.calls if c.method.lower() == "sendphoto" and c.status == 200]
    assert len(photos) == 1
    proposals = [
        c
        for c in standin.calls
        if c.method.lower() == "sendmessage"
        and str(c.params.get("text", "")).startswith("Suggested split")
    ]
    agreeing = [
        record.pressed_at
        for record in standin.world.callbacks.values()
        if any(b.text == "Agree" for row in record.message.buttons() for b in row)
        or (record.message.text or "").startswith("Suggested split")
    ]
    assert proposals and agreeing
    # Order of arrival at the stand-in (an order, not a timing).
    assert photos[0].at <= proposals[0].at < min(agreeing)
