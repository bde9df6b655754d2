"""Confirming the walk's proposal: everyone is asked at exactly one price list.

The walk certifies a bound that assumes money counts one-for-one near the prices; a budget
cap (or any jump in a member's taste) can break it between a member's answer and the
proposal (see ``tests/solver/test_budget_capped_walk.py``). After a hand-over, the parallel
search therefore asks every member at exactly the walk's proposed prices, in one round. If
everyone takes a different room (and the taken rooms carry the rent), that division stands on
an exact certificate, valid whatever the tastes. Otherwise the prices move by model-free
adjustment (:mod:`solver.adjustment`) with a step of one tolerance (what pushes a room
across a member's budget), shrinking by :data:`SHRINK` so the prices cannot cycle, and the
group is asked again. After :data:`MAX_CONFIRMATIONS`
rounds without distinct choices the walk's own proposal and bound are accepted, so the search
still ends.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from fractions import Fraction

from solver.adjustment import adjusted_prices
from solver.labelling import floor_rooms
from solver.planning import let_rooms_carry_the_rent
from solver.problem import Problem
from solver.protocol import Evidence, Proposal, Question

MAX_CONFIRMATIONS = 8
#: Each confirmation round's adjustment step is this fraction of the one before.
SHRINK = Fraction(7, 10)


@dataclass
class Confirmation:
    """One confirmation round at ``prices``."""

    problem: Problem
    prices: tuple[int, ...]
    number: int
    mesh: int
    open: dict[str, Question] = field(default_factory=dict)
    picks: dict[str, int] = field(default_factory=dict)
    decided: set[str] = field(default_factory=set)

    @classmethod
    def ask(cls, problem: Problem, prices: tuple[int, ...], number: int, mesh: int) -> Confirmation:
        """Questions at exactly ``prices`` (the boundary rule applies as usual)."""
        round_ = cls(problem, prices, number, mesh)
        choices = floor_rooms([p - problem.floor for p in prices]) or tuple(range(problem.size))
        for index, member in enumerate(problem.members):
            if len(choices) == 1:
                round_.picks[member] = choices[0]
                round_.decided.add(member)
            else:
                qid = f"c{number}-{index + 1}"
                round_.open[member] = Question(qid, member, prices, choices)
        return round_

    def question(self, question_id: str) -> Question | None:
        return next((q for q in self.open.values() if q.id == question_id), None)

    def take(self, question: Question, room: int) -> None:
        del self.open[question.member]
        self.picks[question.member] = room

    def complete(self) -> bool:
        return not self.open

    def certified(self) -> Proposal | None:
        """The exact division if everyone chose differently and the chosen rooms carry the rent."""
        rooms = set(self.picks.values())
        if len(rooms) != len(self.problem.members):
            return None
        if sum(self.prices[r] for r in rooms) != self.problem.rent:
            return None
        evidence = tuple(
            Evidence(m, self.picks[m], self.prices, "rule" if m in self.decided else "asked")
            for m in self.problem.members
        )
        return Proposal(
            assignment=dict(self.picks),
            prices=self.prices,
            evidence=evidence,
            envy_bound=0,
            mesh=self.mesh,
            empty_rooms=tuple(j for j in range(self.problem.size) if j not in rooms),
        )

    def next_prices(self) -> tuple[int, ...]:
        """Adjusted by demand, the step shrinking from one tolerance (the total is kept)."""
        step = Fraction(self.problem.tolerance) * SHRINK ** (self.number - 1)
        moved = adjusted_prices(self.prices, self.picks, step, self.problem.floor)
        return let_rooms_carry_the_rent(self.problem, moved)
