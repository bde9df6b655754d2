"""Model-free price adjustment: for answers that no quasi-linear taste explains.

When a member's answers contradict the one-for-one money assumption (a budget cap, a change
of mind), the value estimates mean nothing. We then move prices by demand alone, the classic
tatonnement of exchange economies: a room chosen by several members gets dearer, a room
nobody chose gets cheaper, by a step that shrinks geometrically from round to round. The
total of all prices is kept (so with every room let they still sum to the rent), and no room
goes below ``floor + 1`` (a room at the floor would draw everyone by the boundary rule).

No guarantee rests on this: it only has to bring the group to a price list where everyone
chooses differently, which is then certified by their own answers. If it does not within the
round cap, the search hands over to the walk, whose termination does not depend on tastes.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from fractions import Fraction

from solver.money import split_exactly

#: First step as a share of an equal share of the rent, and the factor per adjustment round.
#: The search reaches this mode after learning rounds, near the answer already: measured,
#: budget-capped tenants at 6 rooms, 200 seeds: p90 rounds 23 with 1/8, 19 with 1/16 or 1/32.
FIRST_STEP = Fraction(1, 16)
SHRINK = Fraction(7, 10)


def step_size(share: Fraction, steps_taken: int) -> Fraction:
    """The price step of the ``steps_taken``-th adjustment round (0-based)."""
    return share * FIRST_STEP * SHRINK**steps_taken


def adjusted_prices(
    prices: Sequence[int],
    picks: Mapping[str, int],
    step: Fraction,
    floor: int,
) -> tuple[int, ...]:
    """Move every room by ``step * (choosers - answered / rooms)``, keeping the total.

    ``picks`` maps each member who answered to the room they took at ``prices`` (an admin may
    close a round before everyone did, or before anyone answered at these prices: then
    nothing moves). The excess demands of those who answered sum to zero, so the total is
    unchanged before the clamp at ``floor + 1``; the clamp's cost is taken from the dearest
    rooms, and the last fraction of a unit is placed by :func:`solver.money.split_exactly`.
    """
    rooms = len(prices)
    demand = [0] * rooms
    for room in picks.values():
        demand[room] += 1
    level = Fraction(len(picks), rooms)
    moved = [Fraction(p) + step * (demand[j] - level) for j, p in enumerate(prices)]
    lowest = floor + 1
    clamped = [max(m, Fraction(lowest)) for m in moved]
    excess = sum(clamped, Fraction(0)) - sum(prices)
    for j in sorted(range(rooms), key=lambda r: (-clamped[r], r)):
        if excess <= 0:
            break
        take = min(excess, clamped[j] - lowest)
        clamped[j] -= take
        excess -= take
    return split_exactly(clamped, sum(prices))
