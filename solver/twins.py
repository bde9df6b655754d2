"""Flatmates who may have the same tastes: ask them at different prices.

Two members whose answers so far fit one and the same quasi-linear taste (the union of their
answers is consistent, :meth:`solver.learning.ValueSet.consistent`) may be *twins*: if they
are, they answer alike at every common price list, so a round in which both see the same
prices cannot end with distinct choices, and asking both the same question learns only what
asking one would. When the plan gives such a pair rooms ``a`` and ``b`` and their common
bounds on ``v_a - v_b`` are still wider than a near-tie can bridge, we ask them at the
two points that cut that interval in thirds instead (a search with two probes per step
shrinks an interval by three, not two: ternary rather than binary search, as in Knuth, "The
Art of Computer Programming" vol. 3, section 6.2.1, from memory). The member planned for
``a`` sees the lower difference, so if the pair's worth lies between the probes they already
choose differently.

Tried and measured, not kept: estimating two members who kept answering alike from both
their answers (pooling). It helped true twins (ties at 6 rooms, 200 seeds, runs within 16
rounds 167 -> 174 when pooled after two alike price lists) but pooled quasi-linear tenants
of merely similar taste in half of all rounds and cost them (runs within 15 rounds at 6
rooms 192 -> 185, exact certificates 173 -> 161 of 200). Pooling only after three alike
lists at which someone else chose differently kept more of the gain (ties 179) and still
cost ordinary flats (4 rooms: p90 11 -> 12 rounds, exact 98% -> 94%).

No certificate rests on this: such a round certifies only with the bound that
:func:`solver.envy.envy_bound` computes from the prices each member actually saw, which is
above the tolerance unless the probes are within it of the proposed prices.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np

from solver.learning import ValueSet

#: Common price lists two members must have answered alike before :func:`likely_twins`
#: counts them (one alike answer is common between different tastes).
SEEN_ALIKE = 2


def twin_pairs(value_sets: Sequence[ValueSet], assignment: Sequence[int]) -> list[tuple[int, int]]:
    """Pairs ``(i, j)`` of members with answers, planned for different rooms, that one taste
    could explain."""
    pairs: list[tuple[int, int]] = []
    used: set[int] = set()
    for i, first in enumerate(value_sets):
        for j in range(i + 1, len(value_sets)):
            if i in used or j in used or assignment[i] == assignment[j]:
                continue
            second = value_sets[j]
            if not (_has_answers(first) and _has_answers(second)):
                continue
            if joint(first, second).consistent():
                pairs.append((i, j))
                used.update((i, j))
    return pairs


def probe_asks(
    base: tuple[int, ...],
    asks: list[tuple[int, ...]],
    value_sets: Sequence[ValueSet],
    assignment: Sequence[int],
    wide: float,
    floor: int,
) -> bool:
    """Move the asks of every twin pair whose interval is wider than ``wide``; True if any."""
    moved = False
    for i, j in twin_pairs(value_sets, assignment):
        a, b = assignment[i], assignment[j]
        bounds = joint(value_sets[i], value_sets[j]).tightest()
        low, high = -bounds[a, b], bounds[b, a]  # v_a - v_b within [low, high]
        if not (np.isfinite(low) and np.isfinite(high)) or high - low <= wide:
            continue
        now = base[a] - base[b]
        for member, target in ((i, low + (high - low) / 3), (j, low + 2 * (high - low) / 3)):
            shift = round((target - now) / 2)
            prices = list(base)
            prices[a] += shift
            prices[b] -= shift
            if min(prices[a], prices[b]) > floor:
                asks[member] = tuple(prices)
                moved = True
    return moved


def likely_twins(
    value_sets: Sequence[ValueSet], said: Sequence[Mapping[tuple[int, ...], int]]
) -> set[int]:
    """Members who look like someone else's twin: with that other member they were asked at
    least :data:`SEEN_ALIKE` common price lists, took the same room at every one of them, and
    one taste explains both their answers.

    Stricter than :func:`twin_pairs`, which counts any two members whose answers one taste
    could explain (early on that is almost everyone, and two members who took different rooms
    at the same prices still could be, if both were indifferent). Two members with different
    tastes soon take different rooms at some common price list; twins never do.
    """
    members: set[int] = set()
    for i, first in enumerate(said):
        for j in range(i + 1, len(said)):
            second = said[j]
            common = first.keys() & second.keys()
            if len(common) < SEEN_ALIKE or any(first[p] != second[p] for p in common):
                continue
            if joint(value_sets[i], value_sets[j]).consistent():
                members.update((i, j))
    return members


def joint(first: ValueSet, second: ValueSet) -> ValueSet:
    """What one taste explaining both members' answers must satisfy (may be inconsistent)."""
    both = ValueSet(first.rooms)
    both.limit = np.minimum(first.limit, second.limit)
    return both


def _has_answers(values: ValueSet) -> bool:
    off = values.limit[~np.eye(values.rooms, dtype=bool)]
    return bool(np.any(np.isfinite(off)))
