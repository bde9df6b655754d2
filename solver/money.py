"""Money: integer minor units end to end, and the one place where fractions become cents.

Every amount in Flatpact is an ``int`` of minor units (cents, pence, öre; for currencies
without decimals the major unit itself). The walk works with exact rational price vectors
(grid points, barycentres); :func:`split_exactly` is the single function that turns such
fractional amounts into integers, and it always hits the requested total to the unit.
"""

from __future__ import annotations

from collections.abc import Sequence
from fractions import Fraction
from math import floor

from solver.errors import InvalidProblem

Amount = int | Fraction


def split_exactly(shares: Sequence[Amount], total: int) -> tuple[int, ...]:
    """Round ``shares`` to integers that sum exactly to ``total`` (largest-remainder method).

    Every share is first rounded down; the units still missing are handed out one each to
    the shares with the largest fractional remainders (Hamilton's method). Ties between
    equal remainders go to the lower index, so the result is deterministic and does not
    depend on dictionary or hash order.

    Why this rule: each result differs from its exact share by less than one unit, an exact
    integer share is never moved (its remainder is zero and the missing units are fewer than
    the positive remainders), so a room priced exactly at the floor stays exactly there.

    Raises :class:`InvalidProblem` when the shares do not add up to ``total`` exactly.
    """
    exact = [Fraction(s) for s in shares]
    if sum(exact, Fraction(0)) != total:
        raise InvalidProblem(
            f"shares add up to {sum(exact, Fraction(0))}, not {total}; "
            "pass shares that sum exactly to the total"
        )
    floors = [floor(s) for s in exact]
    missing = total - sum(floors)
    by_remainder = sorted(range(len(exact)), key=lambda i: (-(exact[i] - floors[i]), i))
    for i in by_remainder[:missing]:
        floors[i] += 1
    return tuple(floors)


def format_minor(amount: int, decimals: int = 2) -> str:
    """Plain ``1234.57``-style text for logs and error messages (the bot localises with Babel)."""
    sign = "-" if amount < 0 else ""
    if decimals == 0:
        return f"{sign}{abs(amount)}"
    major, minor = divmod(abs(amount), 10**decimals)
    return f"{sign}{major}.{minor:0{decimals}d}"
