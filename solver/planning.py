"""Choosing the next round's prices from everything learned so far.

Three kinds of round (see :class:`solver.rounds.Plan`):

* ``centre`` — every member's values are estimated by the analytic centre of what they said
  (:mod:`solver.learning`); the group is asked at the envy-free prices with the largest
  smallest margin for the estimates' welfare-maximising assignment
  (:mod:`solver.centre_prices`; with rough values, also the LP's second stage). If everyone
  then takes a different room, those very answers certify the division exactly.
* ``near-tie`` — as ``centre``, but each member sees their planned room a little cheaper
  (:mod:`solver.near_ties`): used once some member's values are pinned closer than the
  tolerance (two tolerances for a likely twin, :func:`solver.twins.likely_twins`), or when
  the plan would repeat an earlier price list (answers there are known, so asking again
  cannot make progress). Also a round in which a pair of possible twins is asked
  at two different points (:mod:`solver.twins`) when the estimates leave no common price list
  with a positive margin; such a round cannot certify (its envy bound is above the tolerance).
* ``adjust`` — model-free price adjustment (:mod:`solver.adjustment`) once any member's
  answers contradict the one-for-one money assumption.
"""

from __future__ import annotations

from collections.abc import Collection, Mapping, Sequence
from fractions import Fraction

import numpy as np

from solver.adjustment import adjusted_prices, step_size
from solver.centre_prices import largest_margin_prices, whole_prices
from solver.learning import Box, ValueSet
from solver.near_ties import largest_cut, nudged
from solver.problem import Problem
from solver.rounds import Plan
from solver.twins import likely_twins, probe_asks

#: A member's values count as pinned (and a near-tie round is planned) once some difference
#: to their planned room is known closer than this many tolerances. A member who looks like
#: someone's twin (:func:`solver.twins.likely_twins`) can only end a round in a near-tie
#: round, which bridges about one tolerance either side of the estimate's centre, so for
#: them it starts at ``PIN_TWINS`` (measured, 200 seeds: ties at 4 rooms p90 17 -> 16 rounds
#: against 1). Anyone else keeps ``PIN``: a common price list can still certify exactly
#: (measured, 200 seeds, quasi-linear without rough values, against 2 for everyone: exact
#: 73% -> 86% at 6 rooms, 20% -> 43% at 10; rounds p90 14 -> 15 at 6 rooms, 17 at 10 either
#: way; ties unchanged, as their twins are spotted before they are pinned).
PIN = 1
PIN_TWINS = 2
#: An LP margin at most this (minor units) counts as none. Equal estimates (two members who
#: said the same) give a largest margin of exactly 0, which HiGHS returns as about +-1e-12;
#: compared with 0 itself, that noise decided at random between a probe round and a round
#: at one common price list that cannot split the twins. Half a minor unit is below what
#: rounding to whole prices changes anyway. Measured, 200 seeds, choices only, runs within
#: 16 rounds for ties at 6 rooms: 156 -> 167 (seeds 200-399: 156 -> 165); quasi-linear at 6
#: rooms unchanged within noise (193 -> 192 runs within 15 rounds, exact 166 -> 173).
ZERO_MARGIN = 0.5


def centre_plan(
    problem: Problem,
    value_sets: Sequence[ValueSet],
    boxes: Sequence[Box],
    seen_bases: Collection[tuple[int, ...]],
    *,
    second_stage: bool = False,
    said: Sequence[Mapping[tuple[int, ...], int]] = (),
) -> Plan:
    """The next ``centre`` (or ``near-tie``) round for consistent answers; ``said[i]`` is
    member ``i``'s answers so far (price list -> room), to spot likely twins."""
    estimates = np.array(
        [vs.centre(box, problem.rent) for vs, box in zip(value_sets, boxes, strict=True)]
    )
    lp = largest_margin_prices(estimates, problem.rent, problem.floor, second_stage=second_stage)
    let = sorted(lp.assignment)
    base = whole_prices(lp.prices, let, problem.rent, problem.floor + 1)
    twins = likely_twins(value_sets, said) if said else set()
    pinned = False
    for i, (vs, own) in enumerate(zip(value_sets, lp.assignment, strict=True)):
        widths = np.delete(vs.widths()[own], own)
        pin = PIN_TWINS if i in twins else PIN
        pinned = pinned or bool(np.any(widths < pin * problem.tolerance))
    if not pinned and base not in seen_bases:
        asks = [base] * len(value_sets)
        wide = PIN_TWINS * problem.tolerance
        # no margin: at the estimates no common price list can end the round, so a pair
        # that may be twins is better asked at two points (solver.twins).
        if lp.margin <= ZERO_MARGIN and probe_asks(
            base, asks, value_sets, lp.assignment, wide, problem.floor
        ):
            return Plan("near-tie", base, tuple(asks), lp.assignment)
        return Plan("centre", base, tuple(asks), lp.assignment)
    cut = largest_cut(base, let, problem.tolerance, problem.floor)
    nudges = tuple(nudged(base, own, let, cut) for own in lp.assignment)
    return Plan("near-tie", base, nudges, lp.assignment)


def adjust_plan(problem: Problem, last: Plan, picks: Mapping[int, int], steps_taken: int) -> Plan:
    """The next model-free round from the last round's choices (member index -> room)."""
    members = len(problem.members)
    share = Fraction(problem.rent, members)
    step = step_size(share, steps_taken)
    moved = adjusted_prices(last.base, {str(i): r for i, r in picks.items()}, step, problem.floor)
    moved = let_rooms_carry_the_rent(problem, moved)
    return Plan("adjust", moved, (moved,) * members, None)


def let_rooms_carry_the_rent(problem: Problem, prices: tuple[int, ...]) -> tuple[int, ...]:
    """With empty rooms: shift all prices so the dearest ``members`` rooms sum to the rent."""
    if not problem.empty_count:
        return prices
    members = len(problem.members)
    let = sorted(sorted(range(problem.size), key=lambda j: (-prices[j], j))[:members])
    shift = Fraction(problem.rent - sum(prices[j] for j in let), members)
    return whole_prices([Fraction(p) + shift for p in prices], let, problem.rent, problem.floor + 1)
