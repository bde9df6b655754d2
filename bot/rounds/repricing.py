"""Re-pricing an agreed split when the total rent changes: the change spread equally.

Why an equal spread keeps the split free of envy, *if money counts one-for-one*: a member
``i`` to whom a room ``j`` is worth ``v_i(j)`` and who pays ``p_j`` for it gets
``v_i(j) - p_j`` from it. Adding the same amount ``d`` to every room's price takes ``d`` off
every room's worth to everyone, so each member's ranking of the rooms, and by how much one is
ahead of another, stays as it was::

    (v_i(j) - (p_j + d)) - (v_i(a_i) - (p_{a_i} + d)) = (v_i(j) - p_j) - (v_i(a_i) - p_{a_i})

i.e. each member's envy of any other room is exactly what it was. (This is the translation
invariance of quasi-linear envy-freeness: with utilities "value minus price" only price
*differences* matter, as in Alkan, Demange & Gale, "Fair allocation of indivisible goods and
money and criteria of justice", Econometrica 59, 1991.)

It relies on that assumption. A member with a budget cap, for whom a room above the cap is out
of reach, can find their room pushed past the cap by a rise while a cheaper room stays within
it: they now envy that room although they did not before (``tests/bot/test_repricing.py``
shows one). That is why the group is told the assumption in plain words and every member
confirms the new split, and an objection leads to questions as in any round.

Whole minor units. The change ``d`` per room is rarely a whole number of minor units, so the
shares go through :func:`solver.money.split_exactly` (equal shares, so the units left over go
one each to the let rooms in room order, the first rooms first): every room's change is
``floor(D/m)`` or ``ceil(D/m)``, the let rooms sum exactly to the new total, and any two
rooms' price difference moves by at most one minor unit, so the envy bound grows by at most
one unit (and not at all when the change divides evenly).

Rooms that stay empty are not paid for; their price is the one at which nobody would rather
move there. They move by ``ceil(D/m)``, rounded up, so never less than any let room (and they
never go below the floor): raising the price of a room nobody pays for only makes it less
tempting, so under the same assumption nobody's envy of an empty room grows at all.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from fractions import Fraction
from math import ceil

from solver import InvalidProblem, split_exactly


class BelowFloor(InvalidProblem):
    """A let room would cost less than the lowest price per room after the change."""

    def __init__(self, room: int, price: int, lowest: int) -> None:
        super().__init__(
            f"room {room} would cost {price}, below the lowest price per room {lowest}; "
            "start a fresh round instead"
        )
        self.room = room
        self.price = price
        self.lowest = lowest


@dataclass(frozen=True, slots=True)
class Repriced:
    """The new prices (every room, in room order) and how much each room moved.

    ``uneven``: the change did not divide evenly, so some let rooms moved one unit more.
    """

    prices: tuple[int, ...]
    changes: tuple[int, ...]
    uneven: bool


def spread_change(
    prices: Sequence[int], let_rooms: Sequence[int], new_let_total: int, lowest: int
) -> Repriced:
    """``prices`` (every room) re-priced so the let rooms sum to ``new_let_total``.

    The difference is spread equally over ``let_rooms`` (see the module docstring for why,
    and where the leftover units go); the other rooms (empty ones) move by the rounded-up
    share but stay at or above ``lowest``. A let room that would go below ``lowest`` raises
    :class:`BelowFloor`: re-pricing would break the group's own rule, so the group needs a
    fresh round instead.
    """
    let = sorted(set(let_rooms))
    if not let or any(not 0 <= room < len(prices) for room in let):
        raise InvalidProblem("name at least one let room, each one of the rooms priced")
    change = new_let_total - sum(prices[room] for room in let)
    shares = split_exactly([Fraction(change, len(let))] * len(let), change)
    empty_change = ceil(Fraction(change, len(let)))
    new = list(prices)
    moved = [0] * len(prices)
    for room, share in zip(let, shares, strict=True):
        new[room] = prices[room] + share
        moved[room] = share
        if new[room] < lowest:
            raise BelowFloor(room, new[room], lowest)
    for room in range(len(prices)):
        if room not in let:
            new[room] = max(prices[room] + empty_change, lowest)
            moved[room] = new[room] - prices[room]
    return Repriced(tuple(new), tuple(moved), len(set(shares)) > 1)
