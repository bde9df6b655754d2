"""Warm start (maximin LP) and inference by monotonicity in money."""

import random

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import linear_sum_assignment

from solver import Problem
from solver.simulate import QuasiLinear, RandomAnswers, Tenant, random_tenants, run
from solver.walk import _implied_choice
from solver.warm_start import maximin_split, start_warm


def test_two_rooms_hand_checked() -> None:
    # Worked out by hand from the LP's definition (not taken from a publication):
    # A values (600, 400), B values (500, 500), rent 1000. Welfare is maximal with A in room 0;
    # maximising min(600 - p0, 500 - p1) with p0 + p1 = 1000 gives p = (550, 450).
    split = maximin_split([[600, 400], [500, 500]], rent=1000)
    assert split.assignment == (0, 1)
    assert split.prices == (550, 450)


def test_three_rooms_hand_checked() -> None:
    # Worked out by hand from the LP's definition (not taken from a publication): the identity
    # assignment at (40, 30, 30) leaves every member a utility of 10, and no member envies.
    split = maximin_split([[50, 30, 20], [40, 40, 20], [30, 30, 40]], rent=100)
    assert split.assignment == (0, 1, 2)
    assert split.prices == (40, 30, 30)


@settings(max_examples=60)
@given(
    n=st.integers(2, 6),
    seed=st.integers(0, 10**6),
)
def test_maximin_split_is_envy_free_and_welfare_maximising(n: int, seed: int) -> None:
    rng = random.Random(seed)
    values = [[rng.randrange(0, 200_000) for _ in range(n)] for _ in range(n)]
    rent = rng.randrange(n * 10_000, n * 150_000)
    split = maximin_split(values, rent, floor=-(10**9))
    assert sum(split.prices) == rent
    for i, own in enumerate(split.assignment):
        mine = values[i][own] - split.prices[own]
        for j in range(n):  # envy-free up to the rounding of prices to minor units
            assert mine >= values[i][j] - split.prices[j] - 2
    # reference: scipy's Hungarian method gives the same total value
    matrix = np.array(values)
    rows, cols = linear_sum_assignment(matrix, maximize=True)
    assert sum(values[i][split.assignment[i]] for i in range(n)) == matrix[rows, cols].sum()


@settings(max_examples=300)
@given(
    values=st.lists(st.integers(0, 100_000), min_size=2, max_size=6),
    data=st.data(),
)
def test_inference_never_contradicts_a_quasi_linear_tenant(values: list[int], data) -> None:
    n = len(values)
    tenant = QuasiLinear(tuple(float(v) for v in values))
    rent = 100_000
    cut = sorted(data.draw(st.lists(st.integers(0, rent), min_size=n - 1, max_size=n - 1)))
    p = tuple(b - a for a, b in zip([0, *cut], [*cut, rent], strict=True))
    room = tenant.choose(p, tuple(range(n)), 0)
    # a q with room no dearer and every other room no cheaper, prices still summing to rent
    give = data.draw(st.integers(0, p[room]))
    shares = data.draw(st.lists(st.integers(0, 10), min_size=n - 1, max_size=n - 1))
    others = [j for j in range(n) if j != room]
    q = list(p)
    q[room] -= give
    weights = sum(shares) or 1
    handed = 0
    for j, w in zip(others, shares, strict=True):
        q[j] += give * w // weights
        handed += give * w // weights
    q[others[0]] += give - handed
    q_t = tuple(q)
    implied = _implied_choice({p: room}, q_t, tuple(range(n)))
    assert implied == room
    assert tenant.choose(q_t, tuple(range(n)), 0) == room


@pytest.mark.parametrize("n", [3, 4, 5])
@pytest.mark.parametrize("seed", range(4))
def test_warm_start_rounds_keep_the_promise(n: int, seed: int) -> None:
    problem = Problem(
        rent=300_000,
        rooms=[f"r{i}" for i in range(n)],
        members=[f"m{i}" for i in range(n)],
        tolerance=100,
    )
    tenants = random_tenants(problem, "quasi-linear", seed)
    rng = random.Random(seed)
    rough = [[v * rng.uniform(0.9, 1.1) for v in tenants[m].values] for m in problem.members]
    walk = start_warm(problem, rough)
    while (proposal := walk.proposal()) is None:
        (q,) = walk.open_questions()
        walk.answer(q.id, tenants[q.member].choose(q.prices, q.choices, 0))
        walk.check()
    assert all(
        tenants[m].envy(proposal.prices, r) <= 100 + 1e-6 for m, r in proposal.assignment.items()
    )


@pytest.mark.parametrize("seed", range(6))
def test_warm_start_still_terminates_on_answers_that_ignore_the_values(seed: int) -> None:
    problem = Problem(
        rent=40_000, rooms=["a", "b", "c", "d"], members=["w", "x", "y", "z"], tolerance=1_000
    )
    adversary: dict[str, Tenant] = {m: RandomAnswers(seed, m) for m in problem.members}
    rough = [[40_000, 0, 0, 0]] * 4  # values pointing somewhere the answers never go
    walk = start_warm(problem, rough)
    while walk.proposal() is None:
        (q,) = walk.open_questions()
        walk.answer(q.id, adversary[q.member].choose(q.prices, q.choices, 0))
    assert walk.proposal().envy_bound <= problem.tolerance
    cold = run(problem, adversary)
    assert cold.proposal.envy_bound <= problem.tolerance
