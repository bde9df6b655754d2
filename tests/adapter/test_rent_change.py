"""/newrent through the real bot and the Bot API stand-in: re-priced, confirmed, both kept.

Outside reference: the Telegram Bot API spec checks every call (fixture ``standin``); the
flat and its people are invented (harness.py).
"""

from __future__ import annotations

from pathlib import Path

from bot.adapter.application import running
from bot.rounds.caution import CAUTION
from bot.sandbox import BotApiStandIn, SimMessage
from tests.adapter.harness import ROOMS, Flat, app_for, euros


def _button(message: SimMessage, label: str) -> str:
    data = next(b.callback_data for row in message.buttons() for b in row if b.text == label)
    assert data is not None
    return data


async def test_new_rent_is_confirmed_by_everyone_and_listed_beside_the_old(
    standin: BotApiStandIn, db_path: Path
) -> None:
    flat = Flat.invent(standin, db_path, size=3, rent=1_850_00, seed=6)
    world = standin.world
    async with running(app_for(standin, db_path)):
        world.user_says(flat.admin, flat.group, f"/newround 1850.00 EUR; {', '.join(ROOMS[:3])}")
        opened = await flat.wait_group("The round is open")
        for person in flat.people:
            await flat.press(person, opened, _button(opened, "Count me in"))
        await flat.wait_group("Every room has a member now")
        world.user_says(flat.admin, flat.group, "/begin")
        await flat.wait_group("Everyone is in")
        assert await flat.play_until_settled() is not None

        world.user_says(flat.people[1], flat.group, "/newrent 1900")
        refused = await flat.wait_group("Not done: only the person who started")
        assert "\n" not in (refused.text or "")

        world.user_says(flat.admin, flat.group, "/newrent 1,900.00")
        proposal = await flat.wait_group("The rent changed from")
        text = proposal.text or ""
        assert f"from {euros(1_850_00)} to {euros(1_900_00)}" in text
        assert "money counts one-for-one" in text and CAUTION in text
        assert f"which matches the rent of {euros(1_900_00)}" in text
        for person in flat.people:
            await flat.press(person, proposal, _button(proposal, "Agree"))

        def settled_twice() -> list[SimMessage] | None:
            done = [
                m
                for m in world.messages_in(flat.group)
                if m.from_bot and (m.text or m.caption or "").startswith("Everyone agreed")
            ]
            return done if len(done) == 2 else None

        both = await standin.wait_for(settled_twice, timeout=10)
        # a picture goes out with each proposal: the first round's and the re-priced one
        pictures = [m for m in world.messages_in(flat.group) if m.photo is not None]
        assert len(pictures) == 2
        assert "The rent changed from" in (both[1].text or both[1].caption or "")
        world.user_says(flat.admin, flat.group, "/agreements")
        listed = await flat.wait_group("Agreements of this group")
        history = listed.text or ""
        assert f"total {euros(1_900_00)}" in history and f"total {euros(1_850_00)}" in history
        assert f"Rent change from {euros(1_850_00)}." in history
