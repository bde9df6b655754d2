"""Real-life rounds: someone moves out, more rooms than people, shared costs, the agreement.

The flat is the demo's invented one (flat_scenario.py). Simulated
tenants come from solver.simulate (quasi-linear: a money value per room); their money-metric
envy is the outside yardstick for "nobody would rather swap".
"""

from __future__ import annotations

from collections.abc import Sequence
from fractions import Fraction

import pytest
from flat_scenario import GROUP, RENT, RENT_TEXT, ROOMS, people
from hypothesis import given
from hypothesis import strategies as st

from bot.rounds.engine import Engine
from bot.rounds.events import Actor, BeginAsking, Configure, Join, OpenJoining, Press, Rerun
from bot.rounds.invariants import check_dump
from bot.rounds.messages import (
    Action,
    AgreementFacts,
    DivisionFacts,
    Kind,
    Outgoing,
    RoundFacts,
)
from bot.rounds.round_settings import RoundSettings
from bot.rounds.setup_input import SetupInput
from bot.rounds.simulated_rounds import Rehearsal
from bot.storage.sqlite import SqliteStore
from solver import Problem
from solver.simulate import Tenant, random_tenants

NEWCOMER = Actor(300, "Kwame")


def tenants(members: Sequence[Actor], rooms: int, seed: int) -> dict[str, Tenant]:
    problem = Problem(RENT, ROOMS[:rooms], [str(m.user_id) for m in members])
    return random_tenants(problem, "quasi-linear", seed)


def prices_of(facts: DivisionFacts, rooms: int) -> list[int]:
    prices = [0] * rooms
    for line in facts.lines:
        prices[line.room_index] = line.price
    for room, price in zip(facts.empty_rooms, facts.empty_prices, strict=True):
        prices[ROOMS.index(room)] = price
    return prices


def assert_no_envy(facts: DivisionFacts, tastes: dict[str, Tenant], rooms: int) -> None:
    """Every member's money-metric envy (solver.simulate) is within the tolerance, empty
    rooms included: nobody would rather move into an empty room at its price either."""
    prices = prices_of(facts, rooms)
    for line in facts.lines:
        assert tastes[str(line.user_id)].envy(prices, line.room_index) <= facts.tolerance


async def settle(
    engine: Engine, group: int, members: Sequence[Actor], tastes: dict[str, Tenant], **extra: str
) -> tuple[Rehearsal, DivisionFacts]:
    play = Rehearsal(engine, group, members[0], members, tastes, key_prefix=f"g{group}")
    out = await play.send(
        Configure(play.key(), group, members[0], SetupInput.parse(RENT_TEXT, ROOMS[:3], **extra))  # type: ignore[arg-type]
    )
    out += await play.send(OpenJoining(play.key(), group, members[0]))
    for member in members:
        out += await play.send(Join(play.key(), group, member))
    out += await play.send(BeginAsking(play.key(), group, members[0]))
    return play, await play.play(out)


async def changeover(
    engine: Engine,
    group: int,
    members: Sequence[Actor],
    tastes: dict[str, Tenant],
    *,
    afresh: bool,
) -> tuple[Rehearsal, list[Outgoing]]:
    """The admin re-runs with the same rooms; the new household joins; stayers may choose."""
    play = Rehearsal(engine, group, members[0], members, tastes, key_prefix=f"c{group}")
    out = await play.send(Rerun(play.key(), group, members[0], keep_members=False))
    out += await play.send(OpenJoining(play.key(), group, members[0]))
    for member in members:
        joined = await play.send(Join(play.key(), group, member))
        out += joined
        offers = [m for m in joined if m.kind is Kind.EARLIER_OFFER]
        if afresh and offers:
            fresh = next(c for c in offers[0].choices if c.action is Action.ANSWER_AFRESH)
            chosen = await play.send(Press(play.key(), member, fresh.token))
            assert [m.kind for m in chosen] == [Kind.EARLIER_CHOSEN]
    out += await play.send(BeginAsking(play.key(), group, members[0]))
    return play, out


async def test_rerun_after_a_move_asks_staying_members_fewer_questions(
    engine: Engine, store: SqliteStore
) -> None:
    """Same tenants, same rooms; only the reuse choice differs between the two groups."""
    asked = {"reuse": 0, "afresh": 0}
    for seed in range(6):
        before = people(3)
        stayers, after = before[:2], [*before[:2], NEWCOMER]
        tastes = tenants(before, 3, seed)
        tastes[str(NEWCOMER.user_id)] = tenants(after, 3, seed + 100)[str(NEWCOMER.user_id)]
        for way, group in (("reuse", GROUP - 10 * seed), ("afresh", GROUP - 10 * seed - 5)):
            await settle(engine, group, before, tastes)
            play, out = await changeover(engine, group, after, tastes, afresh=way == "afresh")
            started = next(m.facts for m in out if m.kind is Kind.ASKING_STARTED)
            assert isinstance(started, RoundFacts)
            if way == "reuse":  # nobody chose, so the default (reuse) is said out loud
                assert set(started.reused_by_default) == {m.display_name for m in stayers}
            else:
                assert started.reused == ()
            facts = await play.play(out)
            assert_no_envy(facts, tastes, 3)
            asked[way] += sum(
                1
                for m in play.log
                if m.kind is Kind.QUESTION and m.to.chat_id in {s.user_id for s in stayers}
            )
    check_dump(await store.dump())
    # The point of reuse: on average the staying members answer strictly fewer questions.
    assert asked["reuse"] < asked["afresh"], asked


async def test_a_room_kept_as_common_space_is_left_out(engine: Engine, store: SqliteStore) -> None:
    members = people(3)
    tastes = tenants(members, 3, 21)  # the three let rooms are ROOMS[:3]
    play = Rehearsal(engine, GROUP, members[0], members, tastes)
    out = await play.send(
        Configure("c", GROUP, members[0], SetupInput.parse(RENT_TEXT, ROOMS[:4], common=ROOMS[3]))
    )
    draft = out[0].facts
    assert isinstance(draft, RoundFacts)
    assert draft.rooms == ROOMS[:3] and draft.common == (ROOMS[3],)
    out = await play.send(OpenJoining("o", GROUP, members[0]))
    for member in members:
        out += await play.send(Join(f"j{member.user_id}", GROUP, member))
    out += await play.send(BeginAsking("b", GROUP, members[0]))
    facts = await play.play(out)
    assert facts.empty_rooms == () and sum(line.price for line in facts.lines) == RENT
    assert ROOMS[3] not in {line.room for line in facts.lines}
    assert_no_envy(facts, tastes, 3)
    document = next(m.facts for m in play.log if m.kind is Kind.AGREEMENT)
    assert isinstance(document, AgreementFacts) and document.common == (ROOMS[3],)
    check_dump(await store.dump())


@pytest.mark.parametrize("seed", [3, 8])
async def test_the_method_chooses_which_room_stays_empty(
    engine: Engine, store: SqliteStore, seed: int
) -> None:
    members = people(3)
    tastes = tenants(members, 4, seed)  # values for all four rooms
    play = Rehearsal(engine, GROUP, members[0], members, tastes)
    await play.send(
        Configure(
            "c", GROUP, members[0], SetupInput.parse(RENT_TEXT, ROOMS[:4], empty_allowed=True)
        )
    )
    out = await play.send(OpenJoining("o", GROUP, members[0]))
    for member in members:
        out += await play.send(Join(f"j{member.user_id}", GROUP, member))
    out += await play.send(BeginAsking("b", GROUP, members[0]))
    facts = await play.play(out)
    assert len(facts.empty_rooms) == 1 and len(facts.lines) == 3
    assert sum(line.price for line in facts.lines) == RENT  # let rooms carry the whole rent
    assert_no_envy(facts, tastes, 4)
    check_dump(await store.dump())


async def test_shared_costs_are_shown_apart_and_add_up(engine: Engine, store: SqliteStore) -> None:
    members = people(3)
    tastes = tenants(members, 3, 5)
    _, facts = await settle(engine, GROUP, members, tastes, shared="300.01", per_person="20")
    # 300.01 does not divide by 3: 100.01 + 100.00 + 100.00, plus 20.00 each.
    assert sorted(line.shared for line in facts.lines) == [120_00, 120_00, 120_01]
    assert sum(line.price for line in facts.lines) == RENT - 300_01 - 3 * 20_00
    assert sum(line.price + line.shared for line in facts.lines) == RENT
    assert_no_envy(facts, tastes, 3)  # the shared part is the same whatever the room
    check_dump(await store.dump())


@given(
    total=st.integers(min_value=1_000, max_value=10**9),
    members=st.integers(min_value=2, max_value=10),
    shared_fraction=st.fractions(min_value=0, max_value=Fraction(9, 10)),
    per_person=st.integers(min_value=0, max_value=5_000),
)
def test_shared_parts_add_up_to_the_unit(
    total: int, members: int, shared_fraction: Fraction, per_person: int
) -> None:
    """Property: room part + everyone's shared part == total, and the even split is fair to
    one unit (each part within one unit of the exact share: the largest-remainder method)."""
    shared = int(total * shared_fraction)
    settings = RoundSettings(total, "EUR", ROOMS[:2], 100, shared=shared, per_person=per_person)
    parts = settings.shared_parts(members)
    assert len(parts) == members
    assert settings.room_rent(members) + sum(parts) == total
    exact = Fraction(shared, members) + per_person
    assert all(abs(part - exact) < 1 for part in parts)


async def _refused_unchanged(engine: Engine, store: SqliteStore, event: object, says: str) -> None:
    before = await store.dump()
    out = await engine.handle(event)  # type: ignore[arg-type]
    assert [m.kind for m in out] == [Kind.REFUSAL]
    assert says in out[0].facts.reason  # type: ignore[union-attr]
    assert await store.dump() == before


@pytest.mark.parametrize(
    ("extra", "says"),
    [
        ({"shared": "1850.00"}, "must be less than the total"),
        ({"shared": "-5"}, "cannot be negative"),
        ({"per_person": "700"}, "must be less than the total"),
        ({"per_person": "1.234"}, "decimal places"),
        ({"common": "Garage"}, "is not one of the rooms"),
        ({"common": f"{ROOMS[0]}, {ROOMS[1]}"}, "a round needs at least 2 rooms"),
    ],
)
async def test_bad_shared_costs_and_rooms_are_refused_unchanged(
    engine: Engine, store: SqliteStore, extra: dict[str, str], says: str
) -> None:
    admin = people(1)[0]
    event = Configure("c", GROUP, admin, SetupInput.parse(RENT_TEXT, ROOMS[:3], **extra))  # type: ignore[arg-type]
    await _refused_unchanged(engine, store, event, says)


async def test_too_few_members_and_late_changes_are_refused_unchanged(
    engine: Engine, store: SqliteStore
) -> None:
    members = people(3)
    await engine.handle(Configure("c", GROUP, members[0], SetupInput.parse(RENT_TEXT, ROOMS[:4])))
    await engine.handle(OpenJoining("o", GROUP, members[0]))
    for member in members:
        await engine.handle(Join(f"j{member.user_id}", GROUP, member))
    begin = BeginAsking("b1", GROUP, members[0])
    await _refused_unchanged(engine, store, begin, "empty rooms yes")
    # Fewer rooms than members who joined: refused, nothing changes.
    fewer = Configure("c2", GROUP, members[0], SetupInput.parse(rooms=ROOMS[:2]))
    await _refused_unchanged(engine, store, fewer, "3 members have joined")
    # Allowed while gathering; then the same begin works.
    allow = await engine.handle(
        Configure("c3", GROUP, members[0], SetupInput.parse(empty_allowed=True))
    )
    assert allow[0].kind is Kind.DRAFT_SAVED
    started = await engine.handle(BeginAsking("b2", GROUP, members[0]))
    assert started[0].kind is Kind.ASKING_STARTED
    late = Configure("c4", GROUP, members[0], SetupInput.parse(shared="100"))
    await _refused_unchanged(engine, store, late, "only change while")
    check_dump(await store.dump())
