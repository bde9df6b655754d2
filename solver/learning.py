"""What a member's answers say about their values: a polytope per member and its centre.

Stated assumption (the bot tells the group in plain words): money counts one-for-one, i.e. a
member's taste is *quasi-linear*: room ``j`` at price ``p_j`` is worth ``v_j - p_j`` to them.
Then the answer "at prices ``p``, offered rooms ``C``, I take ``j``" says

    v_j - p_j >= v_k - p_k   for every k in C,   i.e.   v_k - v_j <= p_k - p_j.

Every answer is a set of *difference constraints*, so everything a member said is summed up
by one matrix ``limit[j][k]`` = the tightest bound on ``v_k - v_j`` (infinite when unknown).
Values are only defined up to a common shift; we fix the representative whose values sum to
the rent. Difference constraints are consistent exactly when the constraint graph has no
negative cycle (Cormen, Leiserson, Rivest & Stein, "Introduction to Algorithms", section
24.4), which :meth:`ValueSet.consistent` checks with Floyd-Warshall on integers, so the
verdict is exact: no floating point decides whether someone contradicted themselves.

The *estimate* is the analytic centre of the polytope intersected with a box (the point
maximising the sum of the logarithms of all slacks). The box keeps it bounded: from 0 to two
equal shares of the rent by default, or around a member's rough values (a soft prior,
doubled in width until the answers fit inside it, so rough values never overrule an
answer). The centre is computed by a damped Newton method on the log-barrier (plain numpy),
started from a strictly interior point found by one linear programme (scipy's HiGHS). The
Chebyshev centre (largest inscribed ball) was the obvious alternative; the analytic centre
uses every constraint, not only the closest ones, and does not creep along thin polytopes.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import linprog

#: Relaxation (minor units) of every constraint when computing the centre, so that a member
#: who was exactly indifferent (a zero-weight cycle) still leaves a strictly interior point.
#: The consistency check itself is exact and does not use it.
CENTRE_SLACK = 0.5
#: How often a box may be doubled before we give up on it (2**40 rents is beyond any price).
MAX_WIDENINGS = 40
NEWTON_STEPS = 100
#: Half-width of the default box in equal shares of the rent (see :func:`default_box`).
DEFAULT_HALF = 1.0


@dataclass(frozen=True, slots=True)
class Box:
    """Per-room value bounds ``centre +- half`` (a soft prior, never an answer).

    ``weight`` is how much the box's own barrier terms count in the analytic centre relative
    to one answer's constraint: more weight keeps the estimate nearer the box centre while
    few answers are in (the box still never overrules an answer).
    """

    centre: tuple[float, ...]
    half: tuple[float, ...]
    weight: float = 1.0

    def widened(self, times: int) -> Box:
        return Box(self.centre, tuple(h * 2.0**times for h in self.half), self.weight)


def default_box(rooms: int, rent: int) -> Box:
    """Values from 0 to two equal shares of the rent for every room (a soft prior: answers
    that do not fit widen it). Measured, 50 seeds, against 0 to the whole rent: median
    rounds at 4 rooms 9 -> 8, ties at 6 rooms median / p90 17 / 20 -> 16 / 19; 0.5 or 0.75
    shares were a little faster still on the benchmark's tenants, whose values lie within
    about 0.45 to 1.75 shares, but that would tune the prior to the simulator."""
    share = rent / rooms
    return Box((share,) * rooms, (DEFAULT_HALF * share,) * rooms)


def prior_box(rough: Sequence[float], rent: int) -> Box:
    """A box around rough values shifted to sum to the rent (values only count up to a shift).

    Half-width 10% of the value plus 2% of an equal share, about the noise of the benchmark's
    rough values (up to 10%), and weight 3 (measured at 6 rooms, 100 seeds: median / p90
    rounds 7 / 10 with weight 1, 6 / 9 with 3 or 5; at 4 rooms 4 / 8 against 3 / 7).
    Measured at 6 rooms, 20 seeds: median rounds 7.5 with this box,
    8 with twice and 10 with four times the width; a box that is too narrow costs little,
    because answers that do not fit widen it.
    """
    n = len(rough)
    shift = (rent - sum(rough)) / n
    centre = tuple(float(r) + shift for r in rough)
    share = rent / n
    return Box(centre, tuple(0.1 * abs(c) + 0.02 * share for c in centre), weight=3.0)


@dataclass(slots=True)
class ValueSet:
    """Everything one member said, as bounds on value differences (see the module docstring)."""

    rooms: int
    limit: np.ndarray = field(init=False)

    def __post_init__(self) -> None:
        self.limit = np.full((self.rooms, self.rooms), np.inf)
        np.fill_diagonal(self.limit, 0.0)

    def add(self, prices: Sequence[int], room: int, choices: Sequence[int]) -> None:
        """Learn "at ``prices``, offered ``choices``, they took ``room``"."""
        for k in choices:
            if k != room:
                bound = float(prices[k] - prices[room])
                if bound < self.limit[room, k]:
                    self.limit[room, k] = bound

    def tightest(self) -> np.ndarray:
        """Shortest-path closure: ``out[j][k]`` is the best implied bound on ``v_k - v_j``."""
        dist = self.limit.copy()
        for k in range(self.rooms):
            dist = np.minimum(dist, dist[:, k, None] + dist[None, k, :])
        return dist

    def consistent(self) -> bool:
        """True when some quasi-linear values explain every answer (no negative cycle)."""
        return bool(np.all(np.diag(self.tightest()) >= 0))

    def contains(self, values: Sequence[float], slack: float = 1e-9) -> bool:
        """True when ``values`` satisfy every answer (values count only up to a shift)."""
        v = np.asarray(values, dtype=float)
        finite = np.isfinite(self.limit)
        differences = v[None, :] - v[:, None]  # [j, k] = v_k - v_j
        return bool(np.all(differences[finite] <= self.limit[finite] + slack))

    def width(self, j: int, k: int) -> float:
        """How far apart the lowest and highest consistent ``v_j - v_k`` are."""
        dist = self.tightest()
        return float(dist[j, k] + dist[k, j])

    def centre(self, box: Box, total: float) -> np.ndarray:
        """The analytic centre of the answers within ``box`` (widened until they fit).

        The representative sums to ``total``. Raises ``ValueError`` when the answers are
        inconsistent (check :meth:`consistent` first).
        """
        if not self.consistent():
            raise ValueError("the answers contradict quasi-linear values; no centre exists")
        rows, rhs = self._half_spaces()
        guess = self._potential_point(total)
        for times in range(MAX_WIDENINGS):
            wide = box.widened(times)
            start = guess if _inside_box(guess, wide) else _interior_point(rows, rhs, wide, total)
            if start is not None:
                return _analytic_centre(rows, rhs, wide, total, start)
        raise ValueError("no box is wide enough for these answers")  # pragma: no cover

    def _potential_point(self, total: float) -> np.ndarray:
        """A point strictly inside the answers' constraints, found without an LP.

        Shortest-path potentials from a virtual source satisfy every difference constraint
        (Cormen et al., section 24.4); computed with each bound relaxed by half the centre's
        slack, they are strictly inside the constraints relaxed by the full slack. Shifted to
        sum to ``total`` (a common shift changes no difference).
        """
        relaxed = np.where(np.isfinite(self.limit), self.limit + CENTRE_SLACK / 2, np.inf)
        np.fill_diagonal(relaxed, 0.0)
        for k in range(self.rooms):
            relaxed = np.minimum(relaxed, relaxed[:, k, None] + relaxed[None, k, :])
        potentials = np.minimum(relaxed.min(axis=0), 0.0)
        shift = (total - float(potentials.sum())) / self.rooms
        return np.asarray(potentials + shift, dtype=float)

    def widths(self) -> np.ndarray:
        """``out[j][k]``: how far apart the lowest and highest consistent ``v_j - v_k`` are."""
        dist = self.tightest()
        return np.asarray(dist + dist.T, dtype=float)

    def _half_spaces(self) -> tuple[np.ndarray, np.ndarray]:
        """Rows ``a`` and bounds ``b`` of ``a @ v <= b`` for the finite difference limits."""
        rows: list[np.ndarray] = []
        rhs: list[float] = []
        for j in range(self.rooms):
            for k in range(self.rooms):
                if j != k and np.isfinite(self.limit[j, k]):
                    row = np.zeros(self.rooms)
                    row[k], row[j] = 1.0, -1.0
                    rows.append(row)
                    rhs.append(self.limit[j, k] + CENTRE_SLACK)
        if not rows:
            return np.zeros((0, self.rooms)), np.zeros(0)
        return np.array(rows), np.array(rhs)


def _with_box(rows: np.ndarray, rhs: np.ndarray, box: Box) -> tuple[np.ndarray, np.ndarray]:
    n = len(box.centre)
    eye = np.eye(n)
    lo = np.array(box.centre) - np.array(box.half)
    hi = np.array(box.centre) + np.array(box.half)
    return np.vstack([rows, eye, -eye]), np.concatenate([rhs, hi, -lo])


def _inside_box(point: np.ndarray, box: Box) -> bool:
    offset = np.abs(point - np.asarray(box.centre))
    return bool(np.all(offset < np.asarray(box.half) - 1e-6))


def _interior_point(rows: np.ndarray, rhs: np.ndarray, box: Box, total: float) -> np.ndarray | None:
    """A point strictly inside (largest uniform slack ``s``), or ``None`` if there is none."""
    a, b = _with_box(rows, rhs, box)
    n = a.shape[1]
    cost = np.zeros(n + 1)
    cost[n] = -1.0  # maximise s
    a_ub = np.hstack([a, np.ones((a.shape[0], 1))])  # a @ v + s <= b
    equality = np.zeros((1, n + 1))
    equality[0, :n] = 1.0
    result = linprog(
        cost,
        A_ub=a_ub,
        b_ub=b,
        A_eq=equality,
        b_eq=np.array([total]),
        bounds=[(None, None)] * n + [(None, max(float(np.max(box.half)), 1.0))],
        method="highs",
    )
    if result.status != 0 or result.x[n] <= 1e-7:
        return None
    return np.asarray(result.x[:n], dtype=float)


def _analytic_centre(
    rows: np.ndarray, rhs: np.ndarray, box: Box, total: float, start: np.ndarray
) -> np.ndarray:
    """Damped Newton on ``-sum(w * log(b - a @ v))`` within ``sum(v) == total``.

    The equality is eliminated with an orthonormal basis ``z`` of ``{sum(d) == 0}``. The
    barrier is self-concordant, so the damped step ``1 / (1 + lambda)`` (``lambda`` the
    Newton decrement) always stays inside, and once ``lambda < 1/4`` full steps converge
    quadratically (Nesterov & Nemirovski; Boyd & Vandenberghe, "Convex Optimization",
    section 9.6). No function values are compared, so rounding cannot stop it early.
    """
    a, b = _with_box(rows, rhs, box)
    n = a.shape[1]
    basis = np.linalg.svd(np.ones((1, n)))[2][1:].T  # n x (n-1), orthonormal, sums to zero
    az = a @ basis
    v = start.copy()
    weights = np.ones(a.shape[0])
    weights[rows.shape[0] :] = box.weight
    for _ in range(NEWTON_STEPS):
        inv = 1.0 / (b - a @ v)
        gradient = az.T @ (weights * inv)
        hessian = (az * (weights * inv**2)[:, None]).T @ az
        step = -np.linalg.solve(hessian, gradient)
        decrement = float(np.sqrt(max(-gradient @ step, 0.0)))
        t = 1.0 if decrement < 0.25 else 1.0 / (1.0 + decrement)
        candidate = v + t * (basis @ step)
        if np.any(b - a @ candidate <= 0):  # pragma: no cover - excluded by self-concordance
            break
        v = candidate
        if decrement < 1e-9:
            break
    return v
