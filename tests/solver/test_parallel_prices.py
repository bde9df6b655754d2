"""The largest-margin prices, whole-unit rounding, price adjustment and near-tie nudges."""

import random
from fractions import Fraction

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import linear_sum_assignment
from scipy.sparse import csr_array
from scipy.sparse.csgraph import NegativeCycleError, bellman_ford

from solver.adjustment import adjusted_prices
from solver.centre_prices import largest_margin_prices, welfare_assignment, whole_prices
from solver.envy import Choice, envy_bound
from solver.near_ties import largest_cut, nudged


def _feasible(values: np.ndarray, assignment: tuple[int, ...], t: float) -> bool:
    """Can prices give every member a margin of at least ``t``? (no negative cycle)

    Independent formulation: the envy constraints p[a(i)] - p[k] <= v[i][a(i)] - v[i][k] - t
    are difference constraints, feasible exactly when their constraint graph has no negative
    cycle (Cormen, Leiserson, Rivest & Stein, "Introduction to Algorithms", section 24.4);
    the common shift of all prices then meets any rent. Checked with scipy's Bellman-Ford.
    """
    n = values.shape[1]
    weights: dict[tuple[int, int], float] = {}
    for i, own in enumerate(assignment):
        for k in range(n):
            if k != own:  # edge k -> own with weight v[i][own] - v[i][k] - t
                w = float(values[i, own] - values[i, k] - t)
                weights[(k, own)] = min(weights.get((k, own), np.inf), w)
    # a virtual source n reaching every room with weight 0 keeps the graph connected
    rows = [k for k, _ in weights] + [n] * n
    cols = [j for _, j in weights] + list(range(n))
    data = list(weights.values()) + [0.0] * n
    # csgraph treats explicit zeros as missing edges; shift zero weights by a hair
    data = [d if d != 0 else 1e-12 for d in data]
    graph = csr_array((data, (rows, cols)), shape=(n + 1, n + 1))
    try:
        bellman_ford(graph, directed=True, indices=n)
    except NegativeCycleError:
        return False
    return True


def _largest_margin_by_bisection(values: np.ndarray, assignment: tuple[int, ...]) -> float:
    lo, hi = -1e7, 1e7
    for _ in range(80):
        mid = (lo + hi) / 2
        if _feasible(values, assignment, mid):
            lo = mid
        else:
            hi = mid
    return lo


@settings(max_examples=40, deadline=None)
@given(n=st.integers(2, 6), seed=st.integers(0, 10**6))
def test_largest_margin_matches_an_independent_formulation(n: int, seed: int) -> None:
    rng = random.Random(seed)
    values = np.array([[rng.uniform(0, 100_000) for _ in range(n)] for _ in range(n)])
    rent = 300_000
    lp = largest_margin_prices(values, rent, floor=-(10**9))
    reference = _largest_margin_by_bisection(values, lp.assignment)
    assert lp.margin == pytest.approx(reference, abs=1e-3)
    # the LP's prices really achieve that margin for every member and room
    for i, own in enumerate(lp.assignment):
        for k in range(n):
            if k != own:
                mine = values[i, own] - lp.prices[own]
                assert mine >= values[i, k] - lp.prices[k] + lp.margin - 1e-6
    assert sum(lp.prices) == pytest.approx(rent)
    # the assignment is welfare-maximising (reference: scipy's Hungarian method)
    rows, cols = linear_sum_assignment(values, maximize=True)
    ours = sum(values[i, lp.assignment[i]] for i in range(n))
    assert ours == pytest.approx(values[rows, cols].sum())
    # welfare-maximising assignments admit envy-free prices (Svensson 1983): margin >= 0
    assert lp.margin >= -1e-6


def test_two_rooms_hand_checked() -> None:
    # Worked out by hand from the LP's definition: A values (600, 400), B (500, 500).
    # A takes room 0; margins 200 - d and d for d = p0 - p1 are equal at d = 100:
    # p = (550, 450), both margins 100.
    lp = largest_margin_prices(np.array([[600.0, 400.0], [500.0, 500.0]]), 1000, floor=-1000)
    assert lp.assignment == (0, 1)
    assert lp.prices == pytest.approx((550, 450))
    assert lp.margin == pytest.approx(100)


@settings(max_examples=40, deadline=None)
@given(n=st.integers(3, 7), members=st.integers(2, 6), seed=st.integers(0, 10**6))
def test_empty_rooms_are_cheapest_and_let_rooms_carry_the_rent(
    n: int, members: int, seed: int
) -> None:
    members = min(members, n)
    rng = random.Random(seed)
    values = np.array([[rng.uniform(0, 80_000) for _ in range(n)] for _ in range(members)])
    lp = largest_margin_prices(values, 200_000, floor=0)
    let = sorted(lp.assignment)
    empty = [j for j in range(n) if j not in let]
    assert sum(lp.prices[j] for j in let) == pytest.approx(200_000)
    assert min(lp.prices) >= 1 - 1e-6
    for e in empty:
        assert all(lp.prices[e] <= lp.prices[j] + 1e-6 for j in let)
    whole = whole_prices(lp.prices, let, 200_000, 1)
    assert sum(whole[j] for j in let) == 200_000
    assert min(whole) >= 1
    assert all(abs(whole[j] - lp.prices[j]) < 2 for j in range(n))


@settings(max_examples=60, deadline=None)
@given(
    prices=st.lists(st.integers(1, 100_000), min_size=2, max_size=8),
    data=st.data(),
    step=st.integers(1, 30_000),
    floor=st.sampled_from([0, -5_000, 500]),
)
def test_adjustment_keeps_the_total_and_moves_with_demand(
    prices: list[int], data: st.DataObject, step: int, floor: int
) -> None:
    prices = [max(p, floor + 1) for p in prices]
    n = len(prices)
    # An admin may close a round before everyone answered, even before anyone answered at
    # this round's prices (only a carried question was answered): any number may pick.
    answering = data.draw(st.integers(0, n))
    picks = {f"m{i}": data.draw(st.integers(0, n - 1)) for i in range(answering)}
    moved = adjusted_prices(prices, picks, Fraction(step), floor)
    assert sum(moved) == sum(prices)
    assert min(moved) >= floor + 1
    if not picks:
        assert list(moved) == prices  # nothing was learned at these prices
    demand = [list(picks.values()).count(j) for j in range(n)]
    if min(moved) > floor + 1 and picks:  # no clamp: rooms move by demand
        everyone = answering == n  # then every move is a whole multiple of the step
        for j in range(n):
            if demand[j] > 1:
                assert moved[j] > prices[j] if everyone else moved[j] >= prices[j]
            if demand[j] == 0:
                assert moved[j] < prices[j] if everyone else moved[j] <= prices[j]


@pytest.mark.parametrize("n", [2, 3, 4, 6, 10])
@pytest.mark.parametrize("tolerance", [2, 3, 100, 250])
def test_nudged_prices_certify_below_the_tolerance(n: int, tolerance: int) -> None:
    base = whole_prices([300_000 / n] * n, list(range(n)), 300_000, 1)
    cut = largest_cut(base, list(range(n)), tolerance, 0)
    for room in range(n):
        ask = nudged(base, room, list(range(n)), cut)
        assert sum(ask) == sum(base)
        assert ask[room] == base[room] - cut
        assert envy_bound([Choice("x", room, ask)], base) < tolerance


def test_welfare_assignment_is_rectangular() -> None:
    values = np.array([[1.0, 5.0, 3.0], [4.0, 6.0, 0.0]])
    assert welfare_assignment(values) == (2, 1) or welfare_assignment(values) == (1, 0)
    # reference: total 9 from (1, 0): 5 + 4 = 9; (2, 1): 3 + 6 = 9 (scipy picks one of them)
