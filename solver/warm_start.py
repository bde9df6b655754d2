"""Warm start: rough values steer where the walk begins; the choices still decide.

Members may give a rough monthly value per room. From these we compute

1. a welfare-maximising assignment (``scipy.optimize.linear_sum_assignment``), and
2. the *maximin* envy-free prices for that assignment: the linear programme of Gal, Mash,
   Procaccia and Zick, "Which is the fairest (rent division) of them all?", J. ACM 64(6),
   2017 (EC 2016): maximise the smallest utility ``R`` subject to
   ``v[i][a(i)] - p[a(i)] >= R``, ``v[i][a(i)] - p[a(i)] >= v[i][j] - p[j]`` for all ``i, j``,
   ``sum(p) == rent``, plus our price floor; solved with ``scipy.optimize.linprog`` (HiGHS).

Envy-free prices for a welfare-maximising assignment always exist when prices are
unrestricted (Svensson 1983); with a floor they may not, and then we fall back to the
unrestricted solution clamped to the floor. The result is only a starting point for
:meth:`solver.walk.Walk.start`: rough values are noisy (a prototype measured the LP point
about a hundred tolerances from the answer with 10% noise), so the walk starts coarse and
refines, and its termination guarantee does not depend on the values at all.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from fractions import Fraction

import numpy as np
from scipy.optimize import linear_sum_assignment, linprog

from solver.errors import InvalidProblem
from solver.money import split_exactly
from solver.problem import Problem
from solver.walk import Options, Walk

#: First mesh per room for a warm start: finer than a cold start, since the walk begins near
#: the answer (tuned with ``python -m solver.bench``).
WARM_FIRST_MESH_PER_ROOM = 16


@dataclass(frozen=True, slots=True)
class MaximinSplit:
    """A welfare-maximising assignment (member index -> room) and its maximin prices."""

    assignment: tuple[int, ...]
    prices: tuple[int, ...]


def welfare_maximising(values: Sequence[Sequence[float]]) -> tuple[int, ...]:
    """Room per member maximising the sum of values (Hungarian method via scipy)."""
    matrix = np.asarray(values, dtype=float)
    rows, cols = linear_sum_assignment(matrix, maximize=True)
    assignment = [0] * len(rows)
    for r, c in zip(rows, cols, strict=True):
        assignment[int(r)] = int(c)
    return tuple(assignment)


def maximin_split(values: Sequence[Sequence[float]], rent: int, floor: int = 0) -> MaximinSplit:
    """The maximin envy-free division for rough ``values[member][room]`` (minor units)."""
    n = len(values)
    if n < 2 or any(len(row) != n for row in values):
        raise InvalidProblem("rough values need one row per member and one value per room")
    assignment = welfare_maximising(values)
    prices = _solve_lp(values, assignment, rent, floor)
    if prices is None:
        prices = _solve_lp(values, assignment, rent, None)
    if prices is None:  # pragma: no cover - unrestricted EF prices always exist (Svensson 1983)
        prices = [rent / n] * n
    return MaximinSplit(assignment, _to_minor_units(prices, rent, floor))


def _solve_lp(
    values: Sequence[Sequence[float]], assignment: Sequence[int], rent: int, floor: int | None
) -> list[float] | None:
    """Variables ``p[0..n-1], R``; maximise ``R`` (linprog minimises ``-R``)."""
    n = len(values)
    cost = np.zeros(n + 1)
    cost[n] = -1.0
    upper_rows: list[np.ndarray] = []
    upper_rhs: list[float] = []
    for i, own in enumerate(assignment):
        row = np.zeros(n + 1)  # R + p[own] <= v[i][own]
        row[own], row[n] = 1.0, 1.0
        upper_rows.append(row)
        upper_rhs.append(float(values[i][own]))
        for j in range(n):
            if j != own:  # p[own] - p[j] <= v[i][own] - v[i][j]
                row = np.zeros(n + 1)
                row[own], row[j] = 1.0, -1.0
                upper_rows.append(row)
                upper_rhs.append(float(values[i][own]) - float(values[i][j]))
    equality = np.zeros((1, n + 1))
    equality[0, :n] = 1.0
    bounds = [(floor, None)] * n + [(None, None)]
    result = linprog(
        cost,
        A_ub=np.array(upper_rows),
        b_ub=np.array(upper_rhs),
        A_eq=equality,
        b_eq=np.array([float(rent)]),
        bounds=bounds,
        method="highs",
    )
    if result.status != 0:
        return None
    return [float(p) for p in result.x[:n]]


def _to_minor_units(prices: Sequence[float], rent: int, floor: int) -> tuple[int, ...]:
    """Clamp to the floor and hand the rounding to :func:`solver.money.split_exactly`."""
    shares = [max(Fraction(p).limit_denominator(10**6), Fraction(floor)) for p in prices]
    excess = sum(shares, Fraction(0)) - rent
    movable = [i for i, s in enumerate(shares) if s > floor] or list(range(len(shares)))
    weight = sum((shares[i] - floor for i in movable), Fraction(0)) or Fraction(len(movable))
    for i in movable:
        part = (shares[i] - floor) / weight if weight else Fraction(1, len(movable))
        shares[i] -= excess * part
    return split_exactly(shares, rent)


def start_warm(
    problem: Problem, rough_values: Sequence[Sequence[float]], options: Options | None = None
) -> Walk:
    """A walk aimed at the maximin split of the rough values (``rough_values[member][room]``)."""
    split = maximin_split(rough_values, problem.rent, problem.floor)
    options = options or Options(first_mesh_per_room=WARM_FIRST_MESH_PER_ROOM)
    return Walk.start(problem, options=options, start_prices=split.prices)
