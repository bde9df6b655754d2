"""The warm start's maximin LP against independent formulations, solved with scipy (HiGHS).

``solver.warm_start`` solves the maximin programme over prices and one number ``R``. Here the
same optimum is computed two other ways, over hypothesis-generated value matrices:

* the primal in *utility variables* ``u[i]`` and prices ``p[j]``, as Gal, Mash, Procaccia &
  Zick state it ("Which is the fairest (rent division) of them all?", J. ACM 64(6), 2017):
  maximise ``min_i u[i]`` subject to ``u[i] = v[i][a(i)] - p[a(i)]``, envy-freeness
  ``u[i] >= v[i][j] - p[j]``, ``sum(p) = rent`` (and our floor ``p[j] >= floor``), for a
  welfare-maximising assignment ``a`` found here by brute force over all permutations;
* the LP *dual* of the price formulation, derived below by standard LP duality (e.g.
  A. Schrijver, "Theory of Linear and Integer Programming", 1986, ch. 7; from memory): equal
  optima when the primal is feasible, an unbounded dual when it is not.

Unrestricted envy-free prices always exist for a welfare-maximising assignment (L.-G.
Svensson, "Large indivisibles: an analysis with respect to price equilibrium and fairness",
Econometrica 51, 1983; title and volume from memory), so without a floor the primal is
always feasible.
"""

from itertools import permutations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import linprog

from solver.warm_start import maximin_split

Matrix = list[list[int]]


def _best_assignments(values: Matrix) -> list[tuple[int, ...]]:
    """Every assignment (member -> room) of maximal total value, by brute force."""
    n = len(values)
    welfare = {a: sum(values[i][a[i]] for i in range(n)) for a in permutations(range(n))}
    top = max(welfare.values())
    return [a for a, w in welfare.items() if w == top]


def _primal_in_utilities(
    values: Matrix, assignment: tuple[int, ...], rent: int, floor: int | None
) -> float | None:
    """Gal et al.'s maximin in variables (u[0..n-1], p[0..n-1], t); None if infeasible."""
    n = len(values)
    size = 2 * n + 1
    u, p, t = (lambda i: i), (lambda j: n + j), 2 * n
    eq_rows, eq_rhs, ub_rows, ub_rhs = [], [], [], []
    for i in range(n):
        row = np.zeros(size)  # u[i] + p[a(i)] = v[i][a(i)]
        row[u(i)], row[p(assignment[i])] = 1.0, 1.0
        eq_rows.append(row)
        eq_rhs.append(float(values[i][assignment[i]]))
        row = np.zeros(size)  # t - u[i] <= 0
        row[t], row[u(i)] = 1.0, -1.0
        ub_rows.append(row)
        ub_rhs.append(0.0)
        for j in range(n):  # -u[i] - p[j] <= -v[i][j]
            if j != assignment[i]:
                row = np.zeros(size)
                row[u(i)], row[p(j)] = -1.0, -1.0
                ub_rows.append(row)
                ub_rhs.append(-float(values[i][j]))
    row = np.zeros(size)
    row[n : 2 * n] = 1.0
    eq_rows.append(row)
    eq_rhs.append(float(rent))
    cost = np.zeros(size)
    cost[t] = -1.0
    result = linprog(
        cost,
        A_ub=np.array(ub_rows),
        b_ub=ub_rhs,
        A_eq=np.array(eq_rows),
        b_eq=eq_rhs,
        bounds=[(None, None)] * n + [(floor, None)] * n + [(None, None)],
        method="highs",
    )
    return -float(result.fun) if result.status == 0 else None


def _dual(values: Matrix, assignment: tuple[int, ...], rent: int, floor: int) -> float | None:
    """The dual of: max t s.t. t + p[a(i)] <= v[i][a(i)]  (y[i] >= 0),
    p[a(i)] - p[j] <= v[i][a(i)] - v[i][j]  (z[i][j] >= 0), -p[j] <= -floor  (s[j] >= 0),
    sum(p) = rent  (w free), with p and t free. It reads: minimise
    sum y[i] v[i][a(i)] + sum z[i][j] (v[i][a(i)] - v[i][j]) - floor sum s[j] + rent w
    subject to sum y = 1 (column of t) and, for each room k (column of p[k]),
    sum over i with a(i) = k of (y[i] + sum_j z[i][j]) - sum over i with a(i) != k of z[i][k]
    - s[k] + w = 0. Returns the optimum, or None when the dual is unbounded."""
    n = len(values)
    pairs = [(i, j) for i in range(n) for j in range(n) if j != assignment[i]]
    size = n + len(pairs) + n + 1
    y, z, s, w = 0, n, n + len(pairs), size - 1
    cost = np.zeros(size)
    for i in range(n):
        cost[y + i] = values[i][assignment[i]]
    for k, (i, j) in enumerate(pairs):
        cost[z + k] = values[i][assignment[i]] - values[i][j]
    cost[s : s + n] = -float(floor)
    cost[w] = float(rent)
    rows = [np.zeros(size) for _ in range(n + 1)]
    rows[0][y : y + n] = 1.0
    for room in range(n):
        row = rows[1 + room]
        for i in range(n):
            if assignment[i] == room:
                row[y + i] += 1.0
        for k, (i, j) in enumerate(pairs):
            if assignment[i] == room:
                row[z + k] += 1.0
            if j == room:
                row[z + k] -= 1.0
        row[s + room] = -1.0
        row[w] = 1.0
    result = linprog(
        cost,
        A_eq=np.array(rows),
        b_eq=[1.0] + [0.0] * n,
        bounds=[(0, None)] * (size - 1) + [(None, None)],
        method="highs",
    )
    assert result.status in (0, 3), result.message  # optimal, or unbounded
    return float(result.fun) if result.status == 0 else None


matrices = st.integers(2, 5).flatmap(
    lambda n: st.lists(
        st.lists(st.integers(0, 100_000), min_size=n, max_size=n), min_size=n, max_size=n
    )
)


@settings(max_examples=60, deadline=None)
@given(
    values=matrices,
    rent_per_room=st.integers(1_000, 60_000),
    floor=st.sampled_from([0, 0, 5_000, 20_000, -30_000]),
)
def test_maximin_split_matches_independent_formulations(
    values: Matrix, rent_per_room: int, floor: int
) -> None:
    n = len(values)
    rent = (rent_per_room + max(floor, 0)) * n  # a valid round: the rent exceeds the floors
    best = _best_assignments(values)
    split = maximin_split(values, rent, floor)
    assert split.assignment in best  # welfare-maximising, checked by brute force
    a = split.assignment
    # Svensson 1983: without a floor envy-free prices exist for this assignment
    free = _primal_in_utilities(values, a, rent, None)
    assert free is not None
    primal = _primal_in_utilities(values, a, rent, floor)
    dual = _dual(values, a, rent, floor)
    if primal is None:  # the floor rules out envy-free prices: the dual must be unbounded
        assert dual is None
        return
    assert dual is not None
    assert abs(primal - dual) <= 1e-6 * max(1.0, abs(primal))  # strong duality
    # the solver's rounded prices reach the optimum up to the rounding to minor units
    assert sum(split.prices) == rent and min(split.prices) >= floor
    utilities = [values[i][a[i]] - split.prices[a[i]] for i in range(n)]
    assert primal - 1 - 1e-6 <= min(utilities) <= primal + 1 + 1e-6
    for i in range(n):  # envy-free up to the rounding (each price moved by under one unit)
        for j in range(n):
            assert utilities[i] >= values[i][j] - split.prices[j] - 2


@settings(max_examples=40, deadline=None)
@given(
    values=st.integers(2, 4).flatmap(
        lambda n: st.lists(
            st.lists(st.integers(0, 3), min_size=n, max_size=n), min_size=n, max_size=n
        )
    ),
)
def test_the_optimum_does_not_depend_on_which_best_assignment(values: Matrix) -> None:
    # Small values make ties between welfare-maximising assignments common. Envy-free prices
    # work with every welfare-maximising assignment and give each member the same utility
    # (Gal, Mash, Procaccia & Zick 2017, building on Alkan, Demange & Gale, Econometrica 59,
    # 1991; stated from memory), so the maximin value is the same for all of them.
    rent = 10 * len(values)
    optima = {
        round(opt, 6)
        for a in _best_assignments(values)
        if (opt := _primal_in_utilities(values, a, rent, None)) is not None
    }
    assert len(optima) == 1
    # and it equals the dual computed for the solver's own assignment (no floor: a very
    # low one, so the floor columns never bind)
    (value,) = optima
    dual = _dual(values, maximin_split(values, rent, -(10**6)).assignment, rent, -(10**6))
    assert dual is not None and abs(dual - value) <= 1e-6
