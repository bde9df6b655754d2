"""Re-running a round after someone moves out: earlier answers of staying members are reused."""

import statistics

import pytest

from solver import InvalidAnswer, Problem, Walk
from solver.simulate import answer_until_proposal, random_tenants

ROOMS = ("Oriel", "Mezzanine", "Yard", "Nook")


def _answers_of(walk: Walk, member: str) -> list[tuple[tuple[int, ...], int]]:
    return [(r.prices, r.room) for r in walk.records if r.member == member and r.source == "asked"]


def _staying_questions(seed: int, reuse: bool) -> int:
    before = Problem(rent=300_000, rooms=ROOMS, members=("a", "b", "c", "d"))
    after = Problem(rent=300_000, rooms=ROOMS, members=("a", "b", "c", "e"))
    tenants = random_tenants(before, "quasi-linear", seed)
    tenants["e"] = random_tenants(after, "quasi-linear", seed + 10_000)["e"]
    first = Walk.start(before)
    answer_until_proposal(first, tenants)
    earlier = {m: _answers_of(first, m) for m in ("a", "b", "c")} if reuse else None
    second = Walk.start(after, earlier=earlier)
    answer_until_proposal(second, tenants)
    proposal = second.proposal()
    assert proposal is not None
    assert all(
        tenants[m].envy(proposal.prices, r) <= 100 + 1e-6 for m, r in proposal.assignment.items()
    )
    asked = second.questions_per_member()
    return asked["a"] + asked["b"] + asked["c"]


def test_reuse_strictly_reduces_questions_for_staying_members() -> None:
    seeds = range(12)
    fresh = statistics.mean(_staying_questions(s, reuse=False) for s in seeds)
    reused = statistics.mean(_staying_questions(s, reuse=True) for s in seeds)
    assert reused < fresh


def test_earlier_answers_must_fit() -> None:
    problem = Problem(rent=300_000, rooms=ROOMS, members=("a", "b", "c", "e"))
    with pytest.raises(InvalidAnswer, match="not in this round"):
        Walk.start(problem, earlier={"d": [((75_000,) * 4, 0)]})
    with pytest.raises(InvalidAnswer, match="does not fit"):
        Walk.start(problem, earlier={"a": [((100_000,) * 3, 0)]})
