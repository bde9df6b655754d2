"""Objections that end, through the real bot: a flatmate who objects to every split.

A real Application polls the stand-in (every call checked against the Bot API spec, fixture
``standin``). One flatmate took one room once and another ever after, and asks to swap at
every split. The group must never see the same split twice, and once objections are used up
an admin ends the round with the button offered for that.
"""

from __future__ import annotations

from pathlib import Path

from bot.adapter.application import running
from bot.demo.flatmates import Asked, Proposed
from bot.rounds.messages import DivisionFacts, Kind
from bot.rounds.outbox_codec import decode
from bot.sandbox import BotApiStandIn, SimMessage
from tests.adapter.harness import Flat, app_for, outbox_rows
from tests.adapter.test_rounds import set_up_and_join


class FirstThenOther:
    """A mind that takes the first room offered once, the second ever after, and always
    asks to swap into the first room (or the third when given the first)."""

    def __init__(self) -> None:
        self.asked = 0

    async def pick_room(self, name: str, asked: Asked) -> int:
        self.asked += 1
        offered = sorted(asked.offered)
        want = 0 if self.asked == 1 else 1
        return want if want in offered else offered[0]

    async def respond(self, name: str, proposed: Proposed) -> int | None:
        return 0

    async def rough_values(self, name: str, rooms: tuple[str, ...]) -> str | None:
        return None


async def test_an_objector_cannot_keep_the_group_waiting(
    standin: BotApiStandIn, db_path: Path
) -> None:
    flat = Flat.invent(standin, db_path, size=3, rent=3_000_00, seed=4)
    flat.household.flatmates[1].mind = FirstThenOther()
    world = standin.world
    async with running(app_for(standin, db_path)):
        await set_up_and_join(flat, "3000.00 EUR", "1.00; one by one yes")
        stopped = await flat.play_until_settled(stop_when_group_sees="are used up", timeout=120)
        assert stopped is None

        def end_button() -> tuple[SimMessage, str] | None:
            for message in reversed(world.messages_in(flat.group)):
                for row in message.buttons():
                    for button in row:
                        if button.text == "End the round (admin)" and button.callback_data:
                            return message, button.callback_data
            return None

        message, data = await standin.wait_for(end_button, 10)
        await flat.press(flat.admin, message, data)
        await flat.wait_group("The round was cancelled")
    # Every split posted to the group, as stored with the message that posted it.
    posted = [
        decode(row["payload"]).facts
        for row in await outbox_rows(db_path)
        if row["kind"] == Kind.PROPOSAL.value and row["chat_id"] == flat.group.id
    ]
    splits = [
        tuple((line.user_id, line.room_index, line.price) for line in f.lines)
        for f in posted
        if isinstance(f, DivisionFacts)
    ]
    assert len(splits) == len(posted) >= 1
    assert len(splits) == len(set(splits)), "the same split was posted twice"
    # The walk came back to a split the group had seen: a short note, not the split again.
    assert any(t.startswith("The answers le") for t in flat.group_texts())
    swaps = [t for t in flat.group_texts() if t.startswith("Someone would rather swap")]
    assert len(swaps) <= 4  # EngineConfig.objection_limit
