"""The resumable protocol: bad calls raise clear errors and change nothing; disputes."""

import pytest

from solver import InvalidAnswer, InvalidState, Problem, Walk
from solver.simulate import random_tenants


def _problem() -> Problem:
    return Problem(rent=250_000, rooms=["Oak", "Elm", "Ash"], members=["a", "b", "c"])


def test_bad_answers_change_nothing() -> None:
    walk = Walk.start(_problem())
    (q,) = walk.open_questions()
    before = walk.to_json()
    for bad_id, room, message in [
        ("q999", 0, "not open"),
        (q.id, 3, "not one of the offered rooms"),
        (q.id, -1, "not one of the offered rooms"),
        (q.id, True, "by its number"),
        (q.id, "1", "by its number"),
    ]:
        with pytest.raises(InvalidAnswer, match=message):
            walk.answer(bad_id, room)
        assert walk.to_json() == before
    walk.answer(q.id, q.choices[0])
    with pytest.raises(InvalidAnswer, match="not open"):
        walk.answer(q.id, q.choices[0])


def test_dispute_before_a_proposal_is_refused() -> None:
    walk = Walk.start(_problem())
    before = walk.to_json()
    with pytest.raises(InvalidState, match="no proposal"):
        walk.dispute("a", 1)
    assert walk.to_json() == before


def _finish(walk: Walk, seed: int) -> None:
    tenants = random_tenants(walk.problem, "quasi-linear", seed)
    while walk.proposal() is None:
        (q,) = walk.open_questions()
        walk.answer(q.id, tenants[q.member].choose(q.prices, q.choices, walk.problem.floor))


def test_dispute_refines_and_proposes_again() -> None:
    walk = Walk.start(_problem())
    _finish(walk, seed=3)
    first = walk.proposal()
    assert first is not None
    member = "b"
    own = first.assignment[member]
    before = walk.to_json()
    with pytest.raises(InvalidAnswer, match="already proposed"):
        walk.dispute(member, own)
    with pytest.raises(InvalidAnswer, match="not a member"):
        walk.dispute("zed", 0)
    assert walk.to_json() == before
    stages = len(walk.stages)
    walk.dispute(member, (own + 1) % 3)
    assert walk.proposal() is None
    assert len(walk.stages) == stages + 1
    assert (
        walk.stages[-1].mesh > walk.stages[-2].mesh or walk.stages[-1].mesh == walk.problem.budget
    )
    assert any(r.source == "objection" for r in walk.records)
    _finish(walk, seed=3)
    assert walk.proposal() is not None


def test_damaged_json_is_refused() -> None:
    with pytest.raises(InvalidState, match="damaged"):
        Walk.from_json('{"format": "flatpact-walk", "version": 1}')
    with pytest.raises(InvalidState, match="format"):
        Walk.from_json('{"format": "other", "version": 9}')
    with pytest.raises(InvalidState, match="damaged"):
        Walk.from_json("not json")


def test_start_prices_must_fit_the_rent() -> None:
    with pytest.raises(InvalidAnswer, match="sum to 250000"):
        Walk.start(_problem(), start_prices=[1, 2, 3])
