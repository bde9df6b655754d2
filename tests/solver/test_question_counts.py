"""Question-count regression: what members are asked, over a fixed seed set, must not grow.

Questions are what costs people effort, so a change that asks more of them should be a
decision, not an accident. This is a count over deterministic seeded runs, never a time.

Recorded on 2026-12-02 from this branch (cold start, default options, quasi-linear tenants,
rent 300000, tolerance 100, seeds 0-19):

    n=3: 385 questions    n=4: 681 questions    (total 1066)

measured with

    .venv/bin/python -c "from tests.solver.test_question_counts import questions_asked as q;
    print(q(3), q(4))"

The bounds are those figures plus 5% (rounded down; the margin is a rule of thumb, common
practice for regression thresholds); a change that lowers the counts should lower the
bounds too.
"""

import pytest

from solver import Problem, Walk
from solver.simulate import answer_until_proposal, random_tenants

SEEDS = range(20)
RECORDED = {3: 385, 4: 681}
BOUND = {n: RECORDED[n] * 105 // 100 for n in RECORDED}


def questions_asked(n: int) -> int:
    """Total questions over ``SEEDS`` for ``n`` rooms and members, every run within tolerance."""
    problem = Problem(
        rent=300_000,
        rooms=[f"r{i}" for i in range(n)],
        members=[f"m{i}" for i in range(n)],
        tolerance=100,
    )
    total = 0
    for seed in SEEDS:
        walk = Walk.start(problem)
        answer_until_proposal(walk, random_tenants(problem, "quasi-linear", seed))
        proposal = walk.proposal()
        assert proposal is not None and proposal.envy_bound <= problem.tolerance
        total += walk.counters.asked
    return total


@pytest.mark.parametrize("n", sorted(RECORDED))
def test_questions_stay_under_the_recorded_bound(n: int) -> None:
    asked = questions_asked(n)
    assert asked <= BOUND[n], f"{asked} questions at n={n}; recorded {RECORDED[n]}"
