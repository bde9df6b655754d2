"""Rounds of questions through the engine: everyone is asked at once, learning in between.

Simulated tenants (solver.simulate, quasi-linear) answer; their money-metric envy is the
outside yardstick for "nobody would rather swap". The certificate rule is the definition of
envy-freeness itself: at one common price list every member chose a different room, so each
took their favourite room at exactly those prices (Foley's envy-freeness, Foley 1967).
"""

from __future__ import annotations

from flat_scenario import GROUP, RENT_TEXT, ROOMS, SECRET, people, tenants_for

from bot.rounds.context import EngineConfig
from bot.rounds.engine import Engine
from bot.rounds.events import (
    Actor,
    BeginAsking,
    Configure,
    Event,
    Join,
    NextRound,
    OpenJoining,
    Press,
    RoughValues,
)
from bot.rounds.invariants import check_dump
from bot.rounds.messages import DivisionFacts, Kind, Outgoing, QuestionFacts, RoundFacts
from bot.rounds.setup_input import SetupInput, TypedAmount, parse_money
from bot.rounds.simulated_rounds import Rehearsal
from bot.storage.sqlite import SqliteStore
from solver import ParallelSearch


def _questions(out: list[Outgoing]) -> list[Outgoing]:
    return [m for m in out if m.kind is Kind.QUESTION]


async def test_a_round_asks_everyone_at_once_and_ends_in_an_exact_split(
    store: SqliteStore,
) -> None:
    members = people(4)
    tenants = tenants_for(members, 3)

    async def checked(play: Rehearsal, event: Event, out: list[Outgoing]) -> None:
        check_dump(await store.dump())

    play = Rehearsal(
        Engine(store, clock=lambda: 1_767_225_600, config=EngineConfig(SECRET)),
        GROUP,
        members[0],
        members,
        tenants,
        after_step=checked,
    )
    out = await play.set_up(RENT_TEXT, ROOMS[:4])
    first = _questions(out)
    assert sorted(m.to.chat_id for m in first) == sorted(a.user_id for a in members)
    facts = [m.facts for m in first]
    assert all(isinstance(f, QuestionFacts) for f in facts)
    assert {f.prices for f in facts if isinstance(f, QuestionFacts)} == {facts[0].prices}  # type: ignore[union-attr]
    assert all(f.round_number == 1 and (f.expected_rounds or 0) >= 2 for f in facts)  # type: ignore[union-attr]
    started = next(m for m in out if m.kind is Kind.ASKING_STARTED)
    assert isinstance(started.facts, RoundFacts)
    assert started.facts.expected_rounds and started.facts.lapses_at
    division = await play.play(out)
    assert isinstance(division, DivisionFacts)
    prices = [0] * len(division.lines)
    for line in division.lines:
        prices[line.room_index] = line.price
    for line in division.lines:
        envy = tenants[str(line.user_id)].envy(prices, line.room_index)
        assert envy <= (0 if division.exact else division.tolerance), line
    assert sum(prices) == division.rent
    # Questions went out a round at a time: every member was asked as often as any other.
    asked = [m.to.chat_id for m in play.log if m.kind is Kind.QUESTION]
    assert len({asked.count(a.user_id) for a in members}) == 1


async def test_the_admin_moves_on_and_a_slow_member_keeps_their_question(
    store: SqliteStore,
) -> None:
    members = people(3)
    engine = Engine(store, clock=lambda: 1_767_225_600, config=EngineConfig(SECRET))
    play = Rehearsal(engine, GROUP, members[0], members, tenants_for(members, 5))
    out = await play.set_up(RENT_TEXT, ROOMS[:3])
    first = {m.to.chat_id: m for m in _questions(out)}
    slow = members[2]
    # Nobody answered yet: nothing to move on with, and nothing changes.
    before = await store.dump()
    refused = await engine.handle(NextRound("n0", GROUP, members[0]))
    assert [m.kind for m in refused] == [Kind.REFUSAL]
    assert await store.dump() == before
    for member in members[:2]:
        await play.answer(first[member.user_id])
    # Only the round's admin (or a group admin) may move on.
    before = await store.dump()
    refused = await engine.handle(NextRound("n1", GROUP, members[1]))
    assert [m.kind for m in refused] == [Kind.REFUSAL]
    assert await store.dump() == before
    moved = await engine.handle(NextRound("n2", GROUP, members[0]))
    asked = {m.to.chat_id for m in _questions(moved)}
    if any(m.kind is Kind.PROPOSAL for m in moved):
        return  # the two answers already settled it (cannot happen with 3 members)
    assert asked == {members[0].user_id, members[1].user_id}  # the slow one is not asked again
    for m in _questions(moved):
        assert isinstance(m.facts, QuestionFacts) and m.facts.round_number == 2
    check_dump(await store.dump())
    # The slow member's first question still works, and then they join the current round.
    late = await engine.handle(Press("late", slow, first[slow.user_id].choices[0].token))
    assert [m.to.chat_id for m in _questions(late)] == [slow.user_id]
    check_dump(await store.dump())


async def test_one_by_one_rounds_use_the_walk_and_cannot_be_moved_on(store: SqliteStore) -> None:
    members = people(3)
    engine = Engine(store, clock=lambda: 1_767_225_600, config=EngineConfig(SECRET))
    play = Rehearsal(engine, GROUP, members[0], members, tenants_for(members, 5))
    out = await play.set_up(RENT_TEXT, ROOMS[:3], one_by_one=True)
    assert len(_questions(out)) == 1
    question = _questions(out)[0].facts
    assert isinstance(question, QuestionFacts) and question.round_number is None
    refused = await engine.handle(NextRound("n", GROUP, members[0]))
    assert [m.kind for m in refused] == [Kind.REFUSAL]
    assert "one of you at a time" in refused[0].facts.reason  # type: ignore[union-attr]
    division = await play.play(out)
    assert sum(line.price for line in division.lines) == division.rent


async def test_rough_values_are_private_optional_and_only_steer_the_start(
    store: SqliteStore,
) -> None:
    members = people(3)
    engine = Engine(store, clock=lambda: 1_767_225_600, config=EngineConfig(SECRET))
    admin = members[0]
    out = await engine.handle(Configure("c", GROUP, admin, SetupInput.parse(RENT_TEXT, ROOMS[:3])))
    out += await engine.handle(OpenJoining("o", GROUP, admin))
    invites = []
    for member in members:
        joined = await engine.handle(Join(f"j{member.user_id}", GROUP, member))
        invites += [m for m in joined if m.kind is Kind.ROUGH_INVITE]
    # Each member is invited once, privately.
    assert sorted(m.to.chat_id for m in invites) == sorted(a.user_id for a in members)
    assert all(m.to.private for m in invites)

    def typed(*texts: str) -> tuple[TypedAmount, ...]:
        return tuple(parse_money(t, what="rough value") for t in texts)

    # Wrong number of amounts, or someone not in a round: refused, nothing stored.
    before = await store.dump()
    wrong = await engine.handle(RoughValues("r0", members[1], typed("700", "450")))
    assert [m.kind for m in wrong] == [Kind.REFUSAL] and "3 rooms" in wrong[0].facts.reason  # type: ignore[union-attr]
    stranger = await engine.handle(RoughValues("r1", Actor(999, "Stranger"), typed("1", "2", "3")))
    assert [m.kind for m in stranger] == [Kind.REFUSAL]
    assert await store.dump() == before
    noted = await engine.handle(RoughValues("r2", members[1], typed("700", "450.50", "€700")))
    assert [(m.kind, m.to.chat_id, m.to.private) for m in noted] == [
        (Kind.ROUGH_NOTED, members[1].user_id, True)
    ]
    # Taken back with "skip" (None), then given again.
    await engine.handle(RoughValues("r3", members[2], typed("1", "2", "3")))
    await engine.handle(RoughValues("r4", members[2], None))
    started = await engine.handle(BeginAsking("b", GROUP, admin))
    asked = [m for m in started if m.kind is Kind.QUESTION]
    assert len(asked) == 3
    round_id = asked[0].facts.round_id  # type: ignore[union-attr]
    found = await engine.search_of(round_id)
    assert found is not None
    search = found[0]
    assert isinstance(search, ParallelSearch) and search.rough is not None
    even = 185_000 / 3
    assert search.rough[1] == [70_000.0, 45_050.0, 70_000.0]  # the one member who gave values
    assert search.rough[0] == search.rough[2] == [even] * 3  # the others: no preference
    # Nobody but the member ever saw them: no group message names an amount they gave.
    group_text = " ".join(str(m.facts) for m in out + started if not m.to.private)
    assert "45050" not in group_text and "450.50" not in group_text


def test_past_its_estimate_a_round_names_no_estimate() -> None:
    from bot.rounds.searches import expected_rounds, round_of
    from solver import Problem, start
    from solver.parallel import TYPICAL

    problem = Problem(300_000, ("A", "B", "C", "D"), ("1", "2", "3", "4"))
    search = start(problem)
    seen: list[tuple[int | None, int | None]] = []
    while search.proposal() is None and (round_of(search) or 99) <= TYPICAL[4] + 2:
        seen.append((round_of(search), expected_rounds(search)))
        for q in list(search.open_questions()):
            search.answer(q.id, q.choices[0])  # everyone always wants the first room
    early = [e for r, e in seen if r is not None and r < TYPICAL[4]]
    late = [e for r, e in seen if r is not None and r >= TYPICAL[4]]
    assert early and all(e is not None and e > 1 for e in early)
    assert late, "erratic answers should take this search past its usual count"
    assert all(e is None for e in late)
