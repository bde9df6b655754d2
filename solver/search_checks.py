"""Invariants of the parallel search, checked by :meth:`ParallelSearch.check`.

Kept in their own module so the search stays readable; each check names the promise it
protects. Cheap enough to run after every step of a stress test.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from solver.errors import BrokenInvariant
from solver.labelling import floor_rooms
from solver.problem import Problem
from solver.protocol import Proposal

if TYPE_CHECKING:
    from solver.parallel import ParallelSearch


def check_parallel(search: ParallelSearch) -> None:
    """Raise :class:`BrokenInvariant` when the search broke one of its promises."""
    problem = search.problem
    if search.walk is not None:
        search.walk.check()
        confirm = search.after.confirm if search.after is not None else None
        if confirm is not None:
            if search.walk.proposal() is None:
                raise BrokenInvariant("a confirmation round without a proposal to confirm")
            if min(confirm.prices) < problem.floor or (
                not problem.empty_count and sum(confirm.prices) != problem.rent
            ):
                raise BrokenInvariant(f"confirmation prices {confirm.prices} break rent or floor")
            if any(q.prices != confirm.prices for q in search.open_questions()):
                raise BrokenInvariant("a confirmation question is not at the round's prices")
    else:
        _check_round(search)
    proposal = search.proposal()
    if proposal is not None:
        check_proposal(problem, proposal)
        if search.walk is None:
            _check_certificate(search, proposal)
    seqs = [r.seq for r in search.all_records()]
    if seqs != sorted(set(seqs)):
        raise BrokenInvariant("log entries are not numbered in order without repeats")
    ids = [q.id for q in search.open_questions()]
    if len(ids) != len(set(ids)):
        raise BrokenInvariant(f"two open questions share an id: {ids}")


def _check_round(search: ParallelSearch) -> None:
    problem = search.problem
    plan = search.plans[-1]
    if len(plan.asks) != len(problem.members) or len(plan.base) != problem.size:
        raise BrokenInvariant("the round's plan does not fit the rooms and members")
    if min(plan.base) < problem.floor:
        raise BrokenInvariant(f"round prices {plan.base} go below the floor")
    if not problem.empty_count and sum(plan.base) != problem.rent:
        raise BrokenInvariant(f"round prices {plan.base} do not sum to the rent")
    for ask in plan.asks:
        if sum(ask) != sum(plan.base) or min(ask) < problem.floor:
            raise BrokenInvariant(f"a question's prices {ask} break the sum or the floor")
    members = [q.member for q in search.open_questions()]
    if len(members) != len(set(members)):
        raise BrokenInvariant(f"a member has two open questions: {members}")
    for q in search.open_questions():
        at_floor = floor_rooms([p - problem.floor for p in q.prices])
        if q.choices != (at_floor or tuple(range(problem.size))) or len(q.choices) < 2:
            raise BrokenInvariant(f"question {q.id} offers {q.choices} at {q.prices}")
    waiting = set(members)
    for member in problem.members:
        answered = member in search._round_picks
        if search.proposal() is None and not answered and member not in waiting:
            raise BrokenInvariant(f"{member} neither answered this round nor has a question")


def _check_certificate(search: ParallelSearch, proposal: Proposal) -> None:
    """A certificate stands only on the latest answers at exactly the prices shown."""
    rooms = [e.room for e in proposal.evidence]
    if len(set(rooms)) != len(rooms):
        raise BrokenInvariant("evidence rooms are not distinct")
    for e in proposal.evidence:
        latest = [r for r in search.records if r.member == e.member and r.prices == e.prices]
        if not latest or latest[-1].room != e.room or proposal.assignment[e.member] != e.room:
            raise BrokenInvariant(f"the evidence of {e.member} is not their latest answer")
    if exact_certificate(proposal) and proposal.envy_bound != 0:
        raise BrokenInvariant("answers at exactly the proposed prices certify envy 0")


def exact_certificate(proposal: Proposal) -> bool:
    """True when every member chose their room at exactly the proposed prices.

    That is the strongest evidence ("each of you chose this room at exactly these prices"),
    valid whatever the tastes. Any other proposal's bound assumes that money counts
    one-for-one near the prices (:mod:`solver.envy`), even when that bound happens to be 0.
    """
    return bool(proposal.evidence) and all(e.prices == proposal.prices for e in proposal.evidence)


def check_proposal(problem: Problem, proposal: Proposal) -> None:
    """A bijection of members to rooms; let rooms sum to the rent; floor; bound kept."""
    rooms = sorted([*proposal.assignment.values(), *proposal.empty_rooms])
    if sorted(proposal.assignment) != sorted(problem.members) or rooms != list(range(problem.size)):
        raise BrokenInvariant(f"assignment {dict(proposal.assignment)} is not a bijection")
    let = sum(proposal.prices[r] for r in proposal.assignment.values())
    if let != problem.rent or min(proposal.prices) < problem.floor:
        raise BrokenInvariant(f"prices {proposal.prices} break the rent or the floor")
