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
    values: np.ndarray, rent: int, floor: int, assignment: Sequence[int] | None = None
) -> CentrePrices:
    """Solve the LP of the module docstring (``values`` is members x rooms)."""
    rooms = values.shape[1]
    plan = tuple(assignment) if assignment is not None else welfare_assignment(values)
    let = set(plan)
    empty = [j for j in range(rooms) if j not in let]
    cost = np.zeros(rooms + 1)
    cost[rooms] = -1.0
    rows: list[np.ndarray] = []
    rhs: list[float] = []
    for i, own in enumerate(plan):
        for k in range(rooms):
            if k != own:  # p[own] - p[k] + t <= v[i][own] - v[i][k]
                row = np.zeros(rooms + 1)
                row[own], row[k], row[rooms] = 1.0, -1.0, 1.0
                rows.append(row)
                rhs.append(float(values[i, own] - values[i, k]))
    for e in empty:
        for j in let:  # p[e] - p[j] <= 0
            row = np.zeros(rooms + 1)
            row[e], row[j] = 1.0, -1.0
            rows.append(row)
            rhs.append(0.0)
    equality = np.zeros((1, rooms + 1))
    for j in let:
        equality[0, j] = 1.0
    result = linprog(
        cost,
        A_ub=np.array(rows),
        b_ub=np.array(rhs),
        A_eq=equality,
        b_eq=np.array([float(rent)]),
        bounds=[(floor + 1, None)] * rooms + [(None, float(rent))],
        method="highs",
    )
    if result.status != 0:  # pragma: no cover - feasible and bounded by construction
        raise BrokenInvariant(f"largest-margin LP failed: {result.message}")
    prices = tuple(float(p) for p in result.x[:rooms])
    return CentrePrices(plan, prices, float(result.x[rooms]))


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
