"""Look-ahead questions: idle members answer in parallel without changing the outcome."""

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from solver import InvalidAnswer, Options, Problem, Walk
from solver.simulate import random_tenants, run


def _problem(n: int) -> Problem:
    return Problem(
        rent=300_000,
        rooms=[f"r{i}" for i in range(n)],
        members=[f"m{i}" for i in range(n)],
        tolerance=100,
    )


@pytest.mark.parametrize("n", [3, 4, 5, 6])
@pytest.mark.parametrize("seed", range(5))
def test_same_division_fewer_rounds(n: int, seed: int) -> None:
    # Quasi-linear tenants answer consistently, so extra answers only replace questions the
    # walk would have asked anyway: the path, and hence the proposal, must be identical.
    problem = _problem(n)
    tenants = random_tenants(problem, "quasi-linear", seed)
    plain = run(problem, tenants, options=Options(look_ahead=False))
    ahead = run(problem, tenants, options=Options(look_ahead=True))
    assert ahead.proposal.assignment == plain.proposal.assignment
    assert ahead.proposal.prices == plain.proposal.prices
    assert [(e.member, e.room, e.prices) for e in ahead.proposal.evidence] == [
        (e.member, e.room, e.prices) for e in plain.proposal.evidence
    ]
    assert plain.waiting_rounds == plain.walk.counters.asked
    assert ahead.waiting_rounds <= plain.waiting_rounds


@settings(max_examples=20)
@given(n=st.integers(3, 5), seed=st.integers(0, 10**6), stop=st.integers(0, 40))
def test_resume_and_refuse_withdrawn_questions(n: int, seed: int, stop: int) -> None:
    problem = _problem(n)
    tenants = random_tenants(problem, "quasi-linear", seed)
    walk = Walk.start(problem, options=Options(look_ahead=True))
    withdrawn: list[str] = []
    for _ in range(stop):
        if walk.proposal() is not None:
            break
        walk.check()
        before = {q.id for q in walk.open_questions()}
        main = walk.open_questions()[0]  # answering the walk's own question first may withdraw
        walk.answer(main.id, tenants[main.member].choose(main.prices, main.choices, 0))
        withdrawn += sorted(before - {main.id} - {q.id for q in walk.open_questions()})
        members = [q.member for q in walk.open_questions()]
        assert len(members) == len(set(members))
    resumed = Walk.from_json(walk.to_json())
    assert resumed.open_questions() == walk.open_questions()
    for qid in withdrawn:
        state = walk.to_json()
        with pytest.raises(InvalidAnswer, match="withdrawn"):
            walk.answer(qid, 0)
        assert walk.to_json() == state
