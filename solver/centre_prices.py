"""Envy-free prices with the largest smallest envy margin, for estimated values.

Given estimated values ``v[i][j]`` (member ``i``, room ``j``) we take a welfare-maximising
assignment ``a`` (``scipy.optimize.linear_sum_assignment``; with more rooms than members the
rooms nobody gets stay empty) and solve the linear programme

    maximise   t
    subject to v[i][a(i)] - p[a(i)] >= v[i][k] - p[k] + t     for every member i, room k,
               sum of the let rooms' prices == rent,
               p[j] >= floor + 1                               for every room,
               p[e] <= p[j]                                    for empty e and let j,

with ``scipy.optimize.linprog`` (HiGHS). Envy-free prices for a welfare-maximising assignment
exist (Svensson, "Large indivisibles: an analysis with respect to price equilibrium and
fairness", Econometrica 51, 1983); the LP view of choosing among them is that of Gal, Mash,
Procaccia and Zick, "Which is the fairest (rent division) of them all?", J. ACM 64(6), 2017.
They maximise the smallest *utility* (a corner of the envy-free region); we maximise the
smallest *envy margin* ``t`` instead, which puts the prices in the middle of the region:
when the estimates are a little off, every member still prefers their planned room. A
corner is where small estimation errors flip answers.

Why ``floor + 1``: a room exactly at the floor triggers the boundary rule (offered a free or
floor-priced room, a member takes one), so every member would take that room and the round
could never end with distinct choices. Why empty rooms are the cheapest: the rooms nobody
takes behave like rooms of stand-ins who value every room at nothing (Alkan, Demange & Gale,
Econometrica 59, 1991), the same convention as the walk's placeholders.

The LP is always feasible (``t`` may be negative) because the validated problem leaves more
than one unit per let room above the floor.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from fractions import Fraction
from typing import Any

import numpy as np
from scipy.optimize import linear_sum_assignment, linprog

from solver.errors import BrokenInvariant
from solver.money import split_exactly


@dataclass(frozen=True, slots=True)
class CentrePrices:
    """A planned division: room per member, exact LP prices, and the smallest margin."""

    assignment: tuple[int, ...]
    prices: tuple[float, ...]
    margin: float


def welfare_assignment(values: np.ndarray) -> tuple[int, ...]:
    """A room per member maximising the total value (rectangular: members <= rooms)."""
    rows, cols = linear_sum_assignment(values, maximize=True)
    assignment = [0] * values.shape[0]
    for r, c in zip(rows, cols, strict=True):
        assignment[int(r)] = int(c)
    return tuple(assignment)


def largest_margin_prices(
    values: np.ndarray,
    rent: int,
    floor: int,
    assignment: Sequence[int] | None = None,
    *,
    second_stage: bool = False,
) -> CentrePrices:
    """Solve the LP of the module docstring (``values`` is members x rooms). With
    ``second_stage``, then among the prices with that smallest margin take those with the
    largest margin for every member and room not held to it (see :func:`_solve`)."""
    rooms = values.shape[1]
    plan = tuple(assignment) if assignment is not None else welfare_assignment(values)
    let = set(plan)
    empty = [j for j in range(rooms) if j not in let]
    margin_rows: list[np.ndarray] = []
    gaps: list[float] = []
    for i, own in enumerate(plan):
        for k in range(rooms):
            if k != own:  # p[own] - p[k] + t <= v[i][own] - v[i][k]
                row = np.zeros(rooms + 1)
                row[own], row[k] = 1.0, -1.0
                margin_rows.append(row)
                gaps.append(float(values[i, own] - values[i, k]))
    order_rows: list[np.ndarray] = []
    for e in empty:
        for j in let:  # p[e] - p[j] <= 0
            row = np.zeros(rooms + 1)
            row[e], row[j] = 1.0, -1.0
            order_rows.append(row)
    equality = np.zeros((1, rooms + 1))
    for j in let:
        equality[0, j] = 1.0
    bounds = [(floor + 1, None)] * rooms + [(None, float(rent))]
    held = np.zeros(len(margin_rows), dtype=bool)
    first = _solve(margin_rows, gaps, order_rows, held, 0.0, equality, rent, bounds)
    margin = float(first.x[rooms])
    duals = np.asarray(first.ineqlin.marginals[: len(margin_rows)], dtype=float)
    held = np.abs(duals) > DUAL_EPSILON
    result = first
    if second_stage and held.any() and not held.all():
        second = _solve(margin_rows, gaps, order_rows, held, margin, equality, rent, bounds)
        if second.status == 0:
            result = second
    prices = tuple(float(p) for p in result.x[:rooms])
    return CentrePrices(plan, prices, margin)


#: A dual value above this marks a margin constraint that holds the first stage's optimum.
DUAL_EPSILON = 1e-9


def _solve(
    margin_rows: Sequence[np.ndarray],
    gaps: Sequence[float],
    order_rows: Sequence[np.ndarray],
    held: np.ndarray,
    held_margin: float,
    equality: np.ndarray,
    rent: int,
    bounds: Sequence[tuple[float | None, float | None]],
) -> Any:
    """Maximise ``t``: every margin row not ``held`` at least ``t``, the held ones at least
    ``held_margin``.

    The second stage of a lexicographic max-min: a margin constraint with a nonzero dual
    value in the first stage is tight at *every* optimum (complementary slackness, e.g.
    Bertsimas & Tsitsiklis, "Introduction to Linear Optimization", section 4.3), so holding
    it at the first margin loses nothing, and the others can be pushed further. Without
    this stage HiGHS returns a vertex of the optimal face: when two members' estimates are
    alike (the smallest margin is then 0 whatever the prices), everyone else's margins are
    whatever that vertex gives, often 0 too.
    """
    rows: list[np.ndarray] = []
    rhs: list[float] = []
    for row, gap, is_held in zip(margin_rows, gaps, held, strict=True):
        with_t = row.copy()
        if is_held:
            rhs.append(gap - held_margin)
        else:
            with_t[-1] = 1.0
            rhs.append(gap)
        rows.append(with_t)
    rows.extend(order_rows)
    rhs.extend([0.0] * len(order_rows))
    cost = np.zeros(equality.shape[1])
    cost[-1] = -1.0
    result = linprog(
        cost,
        A_ub=np.array(rows),
        b_ub=np.array(rhs),
        A_eq=equality,
        b_eq=np.array([float(rent)]),
        bounds=list(bounds),
        method="highs",
    )
    if result.status != 0 and not held.any():  # pragma: no cover - feasible and bounded
        raise BrokenInvariant(f"largest-margin LP failed: {result.message}")
    return result


def whole_prices(
    prices: Sequence[float | Fraction], let: Sequence[int], rent: int, lowest: int
) -> tuple[int, ...]:
    """Minor units: let rooms sum exactly to ``rent``, every room at least ``lowest``.

    Let rooms are rounded by :func:`solver.money.split_exactly` after clamping to ``lowest``
    (the clamp's excess comes off the dearest let rooms); other rooms are rounded up, which
    only makes moving there less tempting.
    """
    shares = {j: max(Fraction(prices[j]).limit_denominator(1000), Fraction(lowest)) for j in let}
    excess = sum(shares.values(), Fraction(0)) - rent
    for j in sorted(let, key=lambda r: (-shares[r], r)):
        if excess <= 0:
            break
        take = min(excess, shares[j] - lowest)
        shares[j] -= take
        excess -= take
    if excess < 0:
        first = min(let)
        shares[first] -= excess
    order = sorted(let)
    rounded = split_exactly([shares[j] for j in order], rent)
    out = [max(lowest, -int(-Fraction(p).limit_denominator(1000) // 1)) for p in prices]
    for j, price in zip(order, rounded, strict=True):
        out[j] = price
    return tuple(out)
