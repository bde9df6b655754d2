"""A group upgraded to a supergroup: only the group's own rows move, never a private chat's.

The invariant "a private message is only ever addressed to its person" is part of
``bot.rounds.invariants.check_dump`` and is checked after every step here, with the upgrade
placed at every step of a seeded round.
"""

from __future__ import annotations

import json
from pathlib import Path

from flat_scenario import GROUP, RENT_TEXT, ROOMS, SECRET, people, tenants_for

from bot.rounds.clock import ManualClock
from bot.rounds.context import EngineConfig
from bot.rounds.engine import Engine
from bot.rounds.events import Event, MoveGroup
from bot.rounds.group_moves import REPOST
from bot.rounds.invariants import check_dump, check_private_stays_private
from bot.rounds.messages import Action, Kind, Outgoing
from bot.rounds.phases import Phase
from bot.rounds.simulated_rounds import Rehearsal
from bot.storage.sqlite import SqliteStore

SUPERGROUP = -1_002_000_000_777


def private_rows(dump: dict[str, list[tuple[object, ...]]]) -> list[tuple[object, object]]:
    """(chat the row is addressed to, person it is meant for) of every private outbox row."""
    found = []
    for row in dump["outbox"]:
        meant_for, private = json.loads(str(row[7]))["to"]
        if private:
            found.append((row[3], meant_for))
    return found


async def test_a_move_named_after_a_private_chat_moves_nothing(
    tmp_path: Path, clock: ManualClock
) -> None:
    members = people(3)
    async with await SqliteStore.open(tmp_path / "f.sqlite3", clock=clock) as store:
        engine = Engine(store, clock=clock, config=EngineConfig(token_secret=SECRET))
        play = Rehearsal(engine, GROUP, members[0], members, tenants_for(members, 2))
        out = await play.set_up(RENT_TEXT, ROOMS[:3])
        assert any(m.kind is Kind.QUESTION for m in out)
        assert private_rows(await store.dump())
        before = await store.dump()
        # The mistake of the old delivery code: a group's ChatMigrated blamed on the private
        # chat being delivered. The engine must not move that person's messages.
        for member in members:
            await engine.handle(MoveGroup(f"wrong:{member.user_id}", member.user_id, SUPERGROUP))
        after = await store.dump()
        assert private_rows(after) == private_rows(before)
        assert all(chat == person for chat, person in private_rows(after))
        assert after["rounds"] == before["rounds"]
        check_dump(after)


async def test_upgrade_at_every_step_of_a_seeded_round(tmp_path: Path, clock: ManualClock) -> None:
    members = people(3)
    tenants = tenants_for(members, 7)
    config = EngineConfig(token_secret=SECRET)
    async with await SqliteStore.open(tmp_path / "steady.sqlite3", clock=clock) as store:
        steady = Rehearsal(
            Engine(store, clock=clock, config=config), GROUP, members[0], members, tenants
        )
        expected = await steady.play(await steady.set_up(RENT_TEXT, ROOMS[:3]))
    assert steady.events > 10
    for upgrade_at in range(steady.events):
        path = tmp_path / f"upgrade-{upgrade_at}.sqlite3"
        async with await SqliteStore.open(path, clock=clock) as store:
            engine = Engine(store, clock=clock, config=config)

            async def step(
                play: Rehearsal,
                event: Event,
                out: list[Outgoing],
                at: int = upgrade_at,
                engine: Engine = engine,
            ) -> None:
                if play.events == at + 1 and play.group_id == GROUP:
                    await engine.handle(MoveGroup(f"migrate:{GROUP}", GROUP, SUPERGROUP))
                    # and the old mistake, naming every member's private chat: must be harmless
                    for member in members:
                        await engine.handle(
                            MoveGroup(f"wrong:{member.user_id}", member.user_id, SUPERGROUP)
                        )
                    play.group_id = SUPERGROUP
                check_private_stays_private(await store.dump())

            play = Rehearsal(engine, GROUP, members[0], members, tenants, after_step=step)
            facts = await play.play(await play.set_up(RENT_TEXT, ROOMS[:3]))
            dump = await store.dump()
        check_dump(dump)
        assert facts.lines == expected.lines, f"upgrade after step {upgrade_at}"
        assert [(row[1], row[3]) for row in dump["rounds"]] == [(SUPERGROUP, Phase.SETTLED.value)]
        assert all(chat == person for chat, person in private_rows(dump))


async def test_a_moved_group_gets_its_progress_message_and_open_proposal_again(
    tmp_path: Path, clock: ManualClock
) -> None:
    members = people(2)
    config = EngineConfig(token_secret=SECRET)
    async with await SqliteStore.open(tmp_path / "f.sqlite3", clock=clock) as store:
        engine = Engine(store, clock=clock, config=config)
        asked: list[list[Outgoing]] = []

        async def move_once_proposed(play: Rehearsal, event: Event, out: list[Outgoing]) -> None:
            if any(m.kind is Kind.PROPOSAL for m in out) and not asked:
                asked.append(await engine.handle(MoveGroup("m", GROUP, SUPERGROUP)))
                play.group_id = SUPERGROUP

        play = Rehearsal(
            engine,
            GROUP,
            members[0],
            members,
            tenants_for(members, 3),
            after_step=move_once_proposed,
        )
        await play.play(await play.set_up(RENT_TEXT, ROOMS[:2]))
    [moved] = asked
    assert [(m.kind, m.to.chat_id, m.ref) for m in moved] == [
        (Kind.PROPOSAL, SUPERGROUP, REPOST),
        (Kind.ASKING_STARTED, SUPERGROUP, REPOST),
    ]
    assert {c.action for c in moved[0].choices} == {Action.ACCEPT, Action.OBJECT}
