"""The envy bound a fully labelled cell certifies, and the proposed point that minimises it.

Member ``m`` chose room ``r`` at the prices ``P`` of their vertex of the final cell. If their
taste is quasi-linear near these prices (a room's worth to them does not depend on the other
rooms' prices, and money counts one-for-one), then at proposed prices ``q`` their envy towards
room ``j`` is at most ``(P[j] - q[j]) - (P[r] - q[r])``: room ``j`` got at most that much
cheaper relative to their own room since they chose. The *envy bound* of ``q`` is the largest
such amount over members and rooms. It is computed from the answers alone, with no valuations,
which is what lets us promise a tolerance to members.

A cell's barycentre is not always the best point (measured: about 1.5 spacings of bound), so
we evaluate the barycentre and every vertex and keep the smallest bound; at the finest mesh
(one minor unit) a vertex always achieves a bound of at most 2 units.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass


@dataclass(frozen=True, slots=True)
class Choice:
    """One member's evidence: at ``prices`` they took ``room``."""

    member: str
    room: int
    prices: tuple[int, ...]


def envy_bound(choices: Sequence[Choice], proposed: Sequence[int]) -> int:
    """The largest money amount by which any member could envy another room at ``proposed``."""
    worst = 0
    for c in choices:
        drift = [p - q for p, q in zip(c.prices, proposed, strict=True)]
        worst = max(worst, max(drift) - drift[c.room])
    return worst


def best_point(
    choices: Sequence[Choice], candidates: Sequence[tuple[int, ...]]
) -> tuple[tuple[int, ...], int]:
    """The candidate with the smallest envy bound (the first one wins ties) and that bound."""
    scored = [(envy_bound(choices, q), i) for i, q in enumerate(candidates)]
    bound, index = min(scored)
    return candidates[index], bound
