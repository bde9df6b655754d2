"""The option that only the chat's admins may start rounds (FLATPACT_ONLY_ADMINS_START).

Without it any member may start a round and so become its admin (the default, unchanged);
with it a non-admin's /newround, /again or /changeover is refused, saying who can, and
nothing is stored.
"""

from __future__ import annotations

from dataclasses import replace

import pytest
from flat_scenario import GROUP, RENT_TEXT, ROOMS, SECRET, people, tenants_for

from bot.adapter.process_settings import Settings
from bot.rounds.clock import ManualClock
from bot.rounds.context import EngineConfig
from bot.rounds.engine import Engine
from bot.rounds.events import Configure, Rerun
from bot.rounds.messages import Kind
from bot.rounds.setup_input import SetupInput
from bot.rounds.simulated_rounds import Rehearsal
from bot.storage.sqlite import SqliteStore

TOKEN = "123456:" + "A" * 35


def _only_admins(store: SqliteStore, clock: ManualClock) -> Engine:
    config = EngineConfig(token_secret=SECRET, only_admins_start=True)
    return Engine(store, clock=clock, config=config)


async def test_a_non_admin_cannot_start_a_round_when_only_admins_may(
    store: SqliteStore, clock: ManualClock
) -> None:
    engine = _only_admins(store, clock)
    member = people(1)[0]
    before = await store.dump()
    setup = SetupInput.parse(RENT_TEXT, ROOMS[:2])
    out = await engine.handle(Configure("c1", GROUP, member, setup, fresh=True))
    assert [m.kind for m in out] == [Kind.REFUSAL]
    assert "only the group's admins" in out[0].facts.reason  # type: ignore[union-attr]
    assert await store.dump() == before
    # A chat admin may.
    admin = replace(member, is_chat_admin=True)
    out = await engine.handle(Configure("c2", GROUP, admin, setup, fresh=True))
    assert Kind.DRAFT_SAVED in [m.kind for m in out]


async def test_by_default_any_member_may_start_a_round(engine: Engine) -> None:
    setup = SetupInput.parse(RENT_TEXT, ROOMS[:2])
    out = await engine.handle(Configure("c1", GROUP, people(1)[0], setup, fresh=True))
    assert Kind.DRAFT_SAVED in [m.kind for m in out]


async def test_the_last_rounds_starter_cannot_rerun_it_without_being_a_chat_admin(
    store: SqliteStore, clock: ManualClock
) -> None:
    members = people(2)
    starter = replace(members[0], is_chat_admin=True)  # an admin then, no longer now
    engine = _only_admins(store, clock)
    play = Rehearsal(engine, GROUP, starter, members, tenants_for(members, 3))
    await play.play(await play.set_up(RENT_TEXT, ROOMS[:2]))
    before = await store.dump()
    out = await engine.handle(Rerun("again", GROUP, members[0], keep_members=True))
    assert [m.kind for m in out] == [Kind.REFUSAL]
    assert "only the group's admins" in out[0].facts.reason  # type: ignore[union-attr]
    assert await store.dump() == before


@pytest.mark.parametrize(
    ("text", "expected"), [("true", True), ("False", False), ("1", True), ("no", False)]
)
def test_the_setting_is_read_as_a_yes_or_no(text: str, expected: bool) -> None:
    settings = Settings(_env_file=None, bot_token=TOKEN, only_admins_start=text)  # type: ignore[call-arg]
    assert settings.only_admins_start is expected
    assert settings.engine_config().only_admins_start is expected


def test_the_setting_is_off_unless_set() -> None:
    settings = Settings(_env_file=None, bot_token=TOKEN)  # type: ignore[call-arg]
    assert settings.only_admins_start is False
