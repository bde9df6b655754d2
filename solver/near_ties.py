"""Near-ties: identical rooms or identical flatmates, where a common price list cannot work.

Two flatmates with the same tastes answer the same at every common price list, so a round in
which everyone sees the same prices never ends with distinct choices. Once a member's values
are pinned closer than the tolerance, we ask each member at their *own* price list: the
planned prices with their planned room cheaper by ``cut`` and the cut spread over the other
let rooms (the let rooms still sum to the rent). If everyone then chooses differently, each
member chose their room at prices that differ from the proposed ones by at most ``cut`` on
their room and ``ceil(cut / (others))`` on any other, so :func:`solver.envy.envy_bound`
certifies an envy of at most ``cut + ceil(cut / others)`` <= tolerance for anyone whose
choice moves the usual way with money (room worth does not depend on other rooms' prices,
money counts one-for-one near these prices). The evidence says so: it is not the exact
certificate of a common price list. A budget cap breaks that assumption when a room crosses
the member's budget between their question and the proposal: the member's answers stay
consistent with one-for-one money, so nothing in them shows it. Measured: 0 of 200
budget-capped runs at 6 rooms end with envy above the tolerance this way, but 1 of 200 did
with the previous planning and with a variant of the current one (second stage also without
rough values): it is rare, not excluded, and the group's Agree/swap step is where such a
member objects.
"""

from __future__ import annotations

from collections.abc import Sequence
from fractions import Fraction

from solver.envy import Choice, envy_bound
from solver.money import split_exactly


def nudged(prices: Sequence[int], room: int, let: Sequence[int], cut: int) -> tuple[int, ...]:
    """``prices`` with ``room`` cheaper by ``cut``, the other let rooms dearer in total by it."""
    others = [j for j in let if j != room]
    raise_by = split_exactly([Fraction(cut, len(others))] * len(others), cut) if others else ()
    out = list(prices)
    out[room] -= cut
    for j, extra in zip(others, raise_by, strict=True):
        out[j] += extra
    return tuple(out)


def largest_cut(prices: Sequence[int], let: Sequence[int], tolerance: int, floor: int) -> int:
    """The largest cut whose worst-case certified envy stays strictly below ``tolerance``."""
    room = min(let, key=lambda j: (prices[j], j))
    for cut in range(tolerance - 1, 0, -1):
        trial = nudged(prices, room, let, cut)
        bound = envy_bound([Choice("probe", room, trial)], prices)
        if bound < tolerance and min(trial) > floor:
            return cut
    return 0
