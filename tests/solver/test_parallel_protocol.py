"""The parallel search's protocol: rounds, bad input, persistence, hand-over, closing rounds."""

import contextlib
import json
import random

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import solver
from solver import InvalidAnswer, InvalidState, ParallelOptions, ParallelSearch, Problem, Walk
from solver.simulate import Tenant, answer_in_rounds, random_tenants


def _problem(n: int = 4, members: int | None = None, floor: int = 0) -> Problem:
    return Problem(
        rent=300_000,
        rooms=[f"r{i}" for i in range(n)],
        members=[f"m{i}" for i in range(members or n)],
        floor=floor,
    )


def _answer_some(search: ParallelSearch, tenants: dict[str, Tenant], count: int) -> None:
    for _ in range(count):
        if search.proposal() is not None:
            return
        q = search.open_questions()[0]
        search.answer(q.id, tenants[q.member].choose(q.prices, q.choices, search.problem.floor))
        search.check()


def test_a_round_asks_everyone_at_one_price_list() -> None:
    problem = _problem()
    search = solver.start(problem)
    assert isinstance(search, ParallelSearch)
    questions = search.open_questions()
    assert [q.member for q in questions] == list(problem.members)
    assert len({q.prices for q in questions}) == 1
    assert sum(questions[0].prices) == problem.rent
    assert search.round_number == 1
    assert search.expected_rounds() >= 2


def test_bad_answers_change_nothing() -> None:
    search = ParallelSearch.start(_problem(3))
    q = search.open_questions()[0]
    before = search.to_json()
    for bad_id, room, message in [
        ("r99-1", 0, "not open"),
        (q.id, 3, "not one of the offered rooms"),
        (q.id, -1, "not one of the offered rooms"),
        (q.id, True, "by its number"),
        (q.id, "1", "by its number"),
    ]:
        with pytest.raises(InvalidAnswer, match=message):
            search.answer(bad_id, room)
        assert search.to_json() == before
    search.answer(q.id, q.choices[0])
    with pytest.raises(InvalidAnswer, match="not open"):
        search.answer(q.id, q.choices[0])
    with pytest.raises(InvalidState, match="no proposal"):
        search.dispute("m0", 1)


@settings(max_examples=10, deadline=None)
@given(n=st.integers(2, 5), seed=st.integers(0, 10**6), stop=st.integers(0, 40))
def test_json_round_trip_continues_identically(n: int, seed: int, stop: int) -> None:
    problem = _problem(n)
    tenants = random_tenants(problem, "quasi-linear", seed)
    reference = ParallelSearch.start(problem)
    answer_in_rounds(reference, tenants)
    partial = ParallelSearch.start(problem)
    _answer_some(partial, tenants, stop)
    text = partial.to_json()
    resumed = solver.resume(text)
    assert isinstance(resumed, ParallelSearch)
    assert resumed.to_json() == text
    assert resumed.open_questions() == partial.open_questions()
    assert ParallelSearch.replay(text).to_json() == text  # recomputed plans are the same
    answer_in_rounds(resumed, tenants)
    answer_in_rounds(partial, tenants)
    assert resumed.to_json() == partial.to_json()
    # the order of answers within a round does not matter: same division as answering in
    # the driver's order from the start
    assert resumed.proposal() == reference.proposal()


def test_question_ids_are_unique_across_the_search() -> None:
    problem = _problem(4)
    tenants = random_tenants(problem, "quasi-linear", 7)
    search = ParallelSearch.start(problem)
    seen: list[str] = []
    while search.proposal() is None:
        for q in search.open_questions():
            if q.id not in seen:
                seen.append(q.id)
        q = search.open_questions()[-1]
        search.answer(q.id, tenants[q.member].choose(q.prices, q.choices, 0))
    assert len(seen) == len(set(seen)) == search.counters.asked


@pytest.mark.parametrize("seed", range(6))
def test_close_round_with_partial_answers_still_terminates(seed: int) -> None:
    problem = _problem(5)
    tenants = random_tenants(problem, "quasi-linear", seed)
    search = ParallelSearch.start(problem)
    rng = random.Random(seed)
    with pytest.raises(InvalidState, match="nobody has answered"):
        search.close_round()
    slow = "m3"  # answers only every third round; the admin closes rounds without them
    steps = 0
    while search.proposal() is None:
        steps += 1
        assert steps < 2_000
        questions = search.open_questions()
        mine = [q for q in questions if q.member == slow]
        others = [q for q in questions if q.member != slow]
        rng.shuffle(others)
        for q in others:
            search.answer(q.id, tenants[q.member].choose(q.prices, q.choices, 0))
            search.check()
        if search.proposal() is not None:
            break
        if mine and search.round_number % 3 == 0:
            q = mine[0]
            search.answer(q.id, tenants[q.member].choose(q.prices, q.choices, 0))
        elif mine and others:
            number = search.round_number
            search.close_round()
            search.check()
            assert search.round_number in (number + 1, number)  # or handed over to the walk
            assert any(q.id == mine[0].id for q in search.open_questions()) or search.walk
    proposal = search.proposal()
    assert proposal is not None
    assert all(
        tenants[m].envy(proposal.prices, r) <= problem.tolerance + 1e-6
        for m, r in proposal.assignment.items()
    )


def test_hand_over_passes_every_answer_on() -> None:
    problem = _problem(4)
    tenants = random_tenants(problem, "quasi-linear", 11)
    earlier = {"m0": [((90_000, 80_000, 70_000, 60_000), 2)]}
    search = ParallelSearch.start(problem, options=ParallelOptions(max_rounds=2), earlier=earlier)
    given_answers: list[tuple[str, tuple[int, ...], int]] = [("m0", earlier["m0"][0][0], 2)]
    while search.walk is None:
        for q in search.open_questions():
            room = tenants[q.member].choose(q.prices, q.choices, 0)
            given_answers.append((q.member, q.prices, room))
            search.answer(q.id, room)
    assert search.walk is not None
    passed = [(r.member, r.prices, r.room) for r in search.walk.records if r.source == "earlier"]
    assert sorted(passed) == sorted(given_answers)
    assert search.walk.records[0].source == "earlier"
    # after the hand-over the search behaves as the walk: one question at a time
    rounds = answer_in_rounds(search, tenants)
    assert rounds >= 1
    assert len(search.open_questions()) == 0
    search.check()
    text = search.to_json()
    resumed = solver.resume(text)
    assert resumed.proposal() == search.proposal()
    assert isinstance(resumed, ParallelSearch) and resumed.walk is not None


def test_dispute_is_recorded_and_the_search_goes_on() -> None:
    problem = _problem(3)
    tenants = random_tenants(problem, "quasi-linear", 3)
    search = ParallelSearch.start(problem)
    answer_in_rounds(search, tenants)
    proposal = search.proposal()
    assert proposal is not None
    own = proposal.assignment["m1"]
    with pytest.raises(InvalidAnswer, match="already proposed"):
        search.dispute("m1", own)
    rounds = search.round_number
    search.dispute("m1", (own + 1) % 3)
    assert search.proposal() is None
    assert search.round_number == rounds + 1
    assert search.records[-1].source == "objection" or any(
        r.source == "objection" for r in search.records
    )
    search.check()
    answer_in_rounds(search, tenants)
    assert search.proposal() is not None


@pytest.mark.parametrize("floor", [0, -20_000, 30_000])
@pytest.mark.parametrize(("rooms", "members"), [(4, 4), (5, 3), (4, 2), (6, 5)])
def test_floors_and_empty_rooms(floor: int, rooms: int, members: int) -> None:
    problem = _problem(rooms, members, floor)
    for seed in range(3):
        tenants = random_tenants(problem, "quasi-linear", seed)
        search = ParallelSearch.start(problem)
        while search.proposal() is None:
            search.check()
            for q in search.open_questions():
                assert min(q.prices) >= floor
                search.answer(q.id, tenants[q.member].choose(q.prices, q.choices, floor))
        search.check()
        proposal = search.proposal()
        assert proposal is not None
        assert len(proposal.empty_rooms) == rooms - members
        assert sum(proposal.prices[r] for r in proposal.assignment.values()) == problem.rent
        assert min(proposal.prices) >= floor
        assert all(
            tenants[m].envy(proposal.prices, r) <= problem.tolerance + 1e-6
            for m, r in proposal.assignment.items()
        )


def test_earlier_answers_count_and_must_fit() -> None:
    problem = _problem(4)
    tenants = random_tenants(problem, "quasi-linear", 5)
    first = ParallelSearch.start(problem)
    answer_in_rounds(first, tenants)
    earlier = {
        m: [(r.prices, r.room) for r in first.records if r.member == m and r.source == "asked"]
        for m in ("m0", "m1", "m2")
    }
    again = ParallelSearch.start(problem, earlier=earlier)
    answer_in_rounds(again, tenants)
    assert again.proposal() is not None
    assert sum(r.source == "earlier" for r in again.records) == sum(map(len, earlier.values()))
    assert again.questions_per_member()["m0"] <= first.questions_per_member()["m0"]
    with pytest.raises(InvalidAnswer, match="not in this round"):
        ParallelSearch.start(problem, earlier={"zed": [((75_000,) * 4, 0)]})
    with pytest.raises(InvalidAnswer, match="does not fit"):
        ParallelSearch.start(problem, earlier={"m0": [((100_000,) * 3, 0)]})
    with pytest.raises(InvalidAnswer, match="rough values"):
        ParallelSearch.start(problem, rough_values=[[1.0] * 4] * 3)


def test_entry_point_selects_the_method_and_resume_dispatches() -> None:
    problem = _problem(3)
    walk = solver.start(problem, method="walk")
    assert isinstance(walk, Walk)
    assert isinstance(solver.resume(walk.to_json()), Walk)
    assert isinstance(solver.resume(solver.start(problem).to_json()), ParallelSearch)
    with pytest.raises(InvalidState, match="format"):
        solver.resume(json.dumps({"format": "something else"}))
    with pytest.raises(InvalidState, match="damaged"):
        solver.resume("not json")
    with pytest.raises(InvalidState, match="damaged"):
        ParallelSearch.from_json(json.dumps({"format": "flatpact-rounds", "version": 1}))


def test_boundary_rule_at_the_floor() -> None:
    # Rounds never price a room at the floor themselves; a stored plan that does (as after a
    # format change) must follow the walk's rule: one floor room decides the answer without
    # asking, several floor rooms are the only ones offered.
    from solver.rounds import Plan

    problem = Problem(rent=300, rooms=["a", "b", "c"], members=["x", "y", "z"], floor=-50)
    one = (-50, 175, 175)
    two = (-50, -50, 400)
    plans = [Plan("adjust", one, (one,) * 3, None), Plan("adjust", two, (two,) * 3, None)]
    search = ParallelSearch(problem, ParallelOptions(), None, {}, plans)
    search.begin()
    assert [r.source for r in search.records] == ["rule"] * 3  # round 1 decided by the rule
    assert search.round_number == 2
    questions = search.open_questions()
    assert [q.choices for q in questions] == [(0, 1)] * 3
    search.check()


@pytest.mark.parametrize("model", ["quasi-linear", "budget-capped", "concave"])
@pytest.mark.parametrize("seed", range(3))
def test_invariants_after_every_step_of_mixed_stress_runs(model: str, seed: int) -> None:
    # answers in random order, rounds closed early at random, objections after proposals,
    # a save and restore now and then: check() after every single step
    rng = random.Random(seed)
    n = rng.choice([3, 4, 5])
    problem = _problem(n, rng.choice([n, n - 1]), rng.choice([0, -10_000]))
    tenants = random_tenants(problem, model, seed)  # type: ignore[arg-type]
    search = ParallelSearch.start(problem, options=ParallelOptions(max_rounds=rng.choice([8, 30])))
    objections = 2
    for _ in range(3_000):
        search.check()
        proposal = search.proposal()
        if proposal is not None:
            if not objections:
                break
            objections -= 1
            member = rng.choice(problem.members)
            other = (proposal.assignment[member] + 1) % problem.size
            search.dispute(member, other)
            continue
        if rng.random() < 0.05:
            search = solver.resume(search.to_json())  # type: ignore[assignment]
            continue
        questions = search.open_questions()
        if search.walk is None and len(questions) > 1 and rng.random() < 0.1:
            with contextlib.suppress(InvalidState):  # nobody answered this round yet
                search.close_round()
            continue
        q = rng.choice(questions)
        search.answer(q.id, tenants[q.member].choose(q.prices, q.choices, problem.floor))
    search.check()
    assert search.proposal() is not None
