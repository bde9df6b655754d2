"""Price maps: from grid points to the minor-unit prices members see and the proposal.

All rounding goes through :func:`solver.money.split_exactly`.
"""

from __future__ import annotations

from collections.abc import Sequence
from fractions import Fraction

from solver.errors import BrokenInvariant
from solver.labelling import valid_target
from solver.money import split_exactly
from solver.problem import Problem


def exact_prices(problem: Problem, x: Sequence[int | Fraction], mesh: int) -> list[Fraction]:
    """Exact prices of the grid point ``x``: ``floor + budget * (x + k * min(x)) / mesh``.

    With as many rooms as members ``k`` is 0 and the prices sum to the rent. With ``e`` rooms
    more than members, ``k = e / members`` lifts every room by the same amount so that, once
    the ``e`` cheapest rooms stay empty, the let rooms' prices sum exactly to the rent (the
    lift pays for the share the empty rooms would have carried). Rooms with ``x == 0`` stay
    exactly at the floor, so the boundary rule is unchanged.
    """
    lift = Fraction(problem.empty_count, len(problem.members)) * min(Fraction(v) for v in x)
    scale = Fraction(problem.budget, mesh)
    return [problem.floor + scale * (Fraction(v) + lift) for v in x]


def grid_prices(problem: Problem, x: Sequence[int | Fraction], mesh: int) -> tuple[int, ...]:
    """Prices in minor units of the grid point ``x`` at ``mesh`` (what a question shows).

    They sum to the rent when every room is let. With empty rooms their total is whatever
    :func:`exact_prices` gives, cut to a whole number of units; the cut comes off rooms above
    the floor, so a room at the floor is shown exactly at the floor.
    """
    exact = exact_prices(problem, x, mesh)
    total = sum(exact, Fraction(0))
    whole = total.numerator // total.denominator
    above = [i for i, v in enumerate(exact) if v > problem.floor] or list(range(len(exact)))
    cut = (total - whole) / len(above)
    return split_exactly([v - cut if i in above else v for i, v in enumerate(exact)], whole)


def settle_prices(
    problem: Problem, x: Sequence[int | Fraction], mesh: int, empty: Sequence[int]
) -> tuple[int, ...]:
    """Proposal prices at the grid point ``x``: let rooms sum exactly to the rent.

    Any shortfall of the let rooms (empty rooms a little above the cheapest) is shared
    equally among them; empty rooms keep their exact price, rounded up (a higher price only
    makes moving there less tempting).
    """
    exact = exact_prices(problem, x, mesh)
    let = [i for i in range(problem.size) if i not in empty]
    shortfall = (problem.rent - sum((exact[i] for i in let), Fraction(0))) / len(let)
    let_prices = split_exactly([exact[i] + shortfall for i in let], problem.rent)
    prices = [-(-exact[i].numerator // exact[i].denominator) for i in range(problem.size)]
    for i, price in zip(let, let_prices, strict=True):
        prices[i] = price
    return tuple(prices)


def target_near(problem: Problem, prices: Sequence[int], mesh: int) -> tuple[int, ...]:
    """The grid point at ``mesh`` nearest to ``prices``, moved off the floor where needed.

    The start layer needs every target coordinate >= 1 (:func:`solver.labelling.valid_target`);
    a room at the floor is nudged one step up, paid for by the room with the most steps. With
    empty rooms the price lift is ignored: this is only where the next stage starts looking.
    """
    above = [Fraction(p - problem.floor) for p in prices]
    total = sum(above, Fraction(0)) or Fraction(1)
    shares = [a * mesh / total if sum(above) else Fraction(mesh, len(above)) for a in above]
    target = list(split_exactly(shares, mesh))
    for i, xi in enumerate(target):
        if xi < 1:
            richest = max(range(len(target)), key=lambda k: (target[k], -k))
            target[richest] -= 1 - xi
            target[i] = 1
    if not valid_target(target, mesh):
        raise BrokenInvariant(f"target {target} at mesh {mesh} cannot start a stage")
    return tuple(target)


def equal_split(problem: Problem) -> tuple[int, ...]:
    """Equal prices for every room (with empty rooms: the equal grid point's prices)."""
    mesh = problem.size
    return grid_prices(problem, [1] * problem.size, mesh)
