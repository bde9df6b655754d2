"""Refusals, redelivery and concurrency: storage stays consistent and unchanged on refusal."""

from __future__ import annotations

import asyncio

import pytest
from flat_scenario import GROUP, RENT_TEXT, ROOMS, people, tenants_for

from bot.rounds.engine import Engine
from bot.rounds.events import Actor, BeginAsking, Cancel, Configure, Event, Join, OpenJoining, Press
from bot.rounds.invariants import check_dump
from bot.rounds.messages import Kind, Outgoing
from bot.rounds.setup_input import SetupInput
from bot.rounds.simulated_rounds import Rehearsal
from bot.storage.sqlite import SqliteStore

STRANGER = Actor(999, "Stranger")


async def _asking(engine: Engine) -> tuple[Rehearsal, Outgoing]:
    members = people(3)
    play = Rehearsal(engine, GROUP, members[0], members, tenants_for(members, 4))
    out = await play.set_up(RENT_TEXT, ROOMS[:3])
    return play, next(m for m in out if m.kind is Kind.QUESTION)


async def _refused_unchanged(engine: Engine, store: SqliteStore, event: Event, says: str) -> None:
    before = await store.dump()
    out = await engine.handle(event)
    assert [m.kind for m in out] == [Kind.REFUSAL]
    assert says in out[0].facts.reason  # type: ignore[union-attr]
    assert await store.dump() == before


@pytest.mark.parametrize(
    ("rent", "rooms", "says"),
    [
        ("-5 EUR", ROOMS[:3], "more than zero"),
        ("0 EUR", ROOMS[:3], "more than zero"),
        ("99999999999 EUR", ROOMS[:3], "implausibly large"),
        (RENT_TEXT, [f"Room {i}" for i in range(11)], "2 to 10 rooms"),
        (RENT_TEXT, ["Loft", ""], "no name"),
        (RENT_TEXT, ["Loft", "y" * 41], "at most 40"),
        (RENT_TEXT, ["Loft", "LOFT"], "must differ"),
    ],
)
async def test_bad_set_up_is_refused_and_nothing_stored(
    engine: Engine, store: SqliteStore, rent: str, rooms: list[str], says: str
) -> None:
    await _refused_unchanged(
        engine, store, Configure("c", GROUP, people(1)[0], SetupInput.parse(rent, rooms)), says
    )


async def test_wrong_people_and_stale_buttons_are_refused_unchanged(
    engine: Engine, store: SqliteStore
) -> None:
    play, question = await _asking(engine)
    owner = next(m for m in play.members if m.user_id == question.to.chat_id)
    other = next(m for m in play.members if m is not owner)
    token = question.choices[0].token
    await _refused_unchanged(engine, store, Press("p1", STRANGER, token), "not a member")
    await _refused_unchanged(engine, store, Press("p2", other, token), "another member")
    await _refused_unchanged(engine, store, Cancel("p3", GROUP, other), "only the person")
    await _refused_unchanged(engine, store, Press("p4", owner, "nonsense1234"), "not valid")
    await _refused_unchanged(
        engine,
        store,
        Configure("p5", GROUP, play.admin, SetupInput.parse(rent="1900 EUR")),
        "only change while",
    )
    first = await engine.handle(Press("p6", owner, token))
    assert first[0].kind is Kind.PROGRESS
    await _refused_unchanged(engine, store, Press("p7", owner, token), "already answered")
    check_dump(await store.dump())


async def test_non_admin_cannot_start_and_counts_must_match(
    engine: Engine, store: SqliteStore
) -> None:
    admin, joiner = people(2)
    await engine.handle(Configure("a", GROUP, admin, SetupInput.parse(RENT_TEXT, ROOMS[:3])))
    await engine.handle(OpenJoining("b", GROUP, admin))
    await engine.handle(Join("c", GROUP, joiner))
    await _refused_unchanged(engine, store, BeginAsking("d", GROUP, joiner), "only the person")
    await _refused_unchanged(engine, store, BeginAsking("e", GROUP, admin), "3 rooms but 1")
    chat_admin = Actor(555, "Group admin", is_chat_admin=True)
    cancelled = await engine.handle(Cancel("f", GROUP, chat_admin))
    assert [m.kind for m in cancelled] == [Kind.CANCELLED]


async def test_redelivered_and_double_pressed_answers(engine: Engine, store: SqliteStore) -> None:
    play, question = await _asking(engine)
    owner = next(m for m in play.members if m.user_id == question.to.chat_id)
    token = question.choices[0].token
    same_key = await asyncio.gather(
        engine.handle(Press("dup", owner, token)), engine.handle(Press("dup", owner, token))
    )
    assert sorted(len(out) > 0 for out in same_key) == [False, True]  # one effect, one []
    check_dump(await store.dump())
    again = await engine.handle(Press("dup", owner, token))
    assert again == []
    twice = await engine.handle(Press("other-key", owner, token))
    assert [m.kind for m in twice] == [Kind.REFUSAL]
    check_dump(await store.dump())


async def test_concurrent_rounds_in_two_groups_and_shared_members(
    engine: Engine, store: SqliteStore
) -> None:
    members = people(3)
    plays = [
        Rehearsal(engine, group, members[0], members, tenants_for(members, group), key_prefix="g")
        for group in (-1, -2)
    ]
    outs = await asyncio.gather(*(p.set_up(RENT_TEXT, ROOMS[:3]) for p in plays))
    results = await asyncio.gather(*(p.play(o) for p, o in zip(plays, outs, strict=True)))
    assert all(sum(line.price for line in r.lines) == 185_000 for r in results)
    check_dump(await store.dump())


@pytest.mark.parametrize("begun", [False, True])
async def test_a_second_new_round_leaves_the_open_one_as_it_is(
    engine: Engine, store: SqliteStore, begun: bool
) -> None:
    admin = people(1)[0]
    if begun:
        await _asking(engine)
    else:
        await engine.handle(
            Configure("c1", GROUP, admin, SetupInput.parse(RENT_TEXT, ROOMS[:3]), fresh=True)
        )
        await engine.handle(OpenJoining("o1", GROUP, admin))
    again = Configure("c2", GROUP, admin, SetupInput.parse("2400 EUR", ROOMS[3:5]), fresh=True)
    await _refused_unchanged(engine, store, again, "already has a round")
