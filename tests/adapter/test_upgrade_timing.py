"""A group upgraded to a supergroup at every possible moment of a seeded round.

The upgrade happens right after a member's press is queued and before the bot has seen it,
once per press of the round (joins, answers, agreements). After every step, and at the end,
no private text may be in any group chat (tests/adapter/privacy.py), the round must settle in
the supergroup, and the agreement must keep the solver's promise.

Outside reference: the Telegram Bot API spec checks every call (fixture ``standin``); an
upgraded group's old id answers 400 with ``migrate_to_chat_id`` (ResponseParameters).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from bot.adapter.application import running
from bot.sandbox import BotApiStandIn
from tests.adapter.harness import Flat, app_for
from tests.adapter.privacy import assert_private_stays_private
from tests.adapter.test_rounds import check_agreement, set_up_and_join

#: Presses in the seeded round below (2 joins, 6 answers in 3 rounds of questions, 2
#: agreements); the test fails if the round ever has fewer, so no case can pass without an
#: upgrade.
PRESSES = 10


@pytest.mark.parametrize("upgrade_at", range(PRESSES))
async def test_upgrade_at_every_press_keeps_private_text_private(
    standin: BotApiStandIn, db_path: Path, upgrade_at: int
) -> None:
    flat = Flat.invent(standin, db_path, size=2, rent=900_00, seed=1)
    world = standin.world
    presses: list[int] = []
    old_group = flat.group

    def upgrade_at_the_chosen_press() -> None:
        if len(presses) == upgrade_at:
            flat.group = world.upgrade_to_supergroup(old_group)
        presses.append(len(presses))

    flat.on_press = upgrade_at_the_chosen_press
    async with running(app_for(standin, db_path)):
        await set_up_and_join(flat, "900.00 EUR", "10")
        settled = await flat.play_until_settled()
        assert settled is not None and settled.chat.id == flat.group.id
        await assert_private_stays_private(standin, db_path)
    assert flat.group.id != old_group.id, f"the round had only {len(presses)} presses"
    await check_agreement(flat, tolerance=10_00)
