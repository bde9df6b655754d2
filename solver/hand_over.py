"""After the hand-over: the walk, and confirmation rounds of each proposal it makes.

Once the parallel search hands over (:meth:`solver.parallel.ParallelSearch`), questions come
from the walk one at a time. When the walk proposes, the proposal is confirmed in rounds at
one price list (:mod:`solver.confirm`) before it is shown; an objection afterwards goes to
the walk, which refines, and its next proposal is confirmed again.
"""

from __future__ import annotations

from dataclasses import replace

from solver.confirm import MAX_CONFIRMATIONS, Confirmation
from solver.errors import InvalidAnswer, InvalidState
from solver.problem import Problem
from solver.protocol import Proposal, Question, Record
from solver.walk import Walk


class HandedOver:
    """The walk plus confirmation state; ``stage_offset`` numbers its rounds after ours."""

    def __init__(self, problem: Problem, walk: Walk, stage_offset: int) -> None:
        self.problem = problem
        self.walk = walk
        self.stage_offset = stage_offset
        self.confirm: Confirmation | None = None
        self.confirmations = 0
        self.confirm_rounds = 0
        self.confirmed: Proposal | None = None
        self.confirm_records: list[tuple[int, Record]] = []
        self._after_walk_step()

    def open_questions(self) -> list[Question]:
        if self.confirm is not None:
            order = self.problem.members
            return [self.confirm.open[m] for m in order if m in self.confirm.open]
        return self.walk.open_questions()

    def rounds(self) -> int:
        """Rounds since the hand-over: each walk question and each confirmation round."""
        return self.walk.counters.asked + self.confirm_rounds

    def answer(self, question_id: str, room_index: int) -> None:
        confirm = self.confirm
        question = confirm.question(question_id) if confirm is not None else None
        if confirm is None or question is None:
            self.walk.answer(question_id, room_index)
            self._after_walk_step()
            return
        check_room(room_index, question.choices)
        confirm.take(question, room_index)
        record = Record(
            0, self.stage_offset, question.member, question.prices, room_index, "asked", None
        )
        self.confirm_records.append((len(self.walk.records), record))
        if confirm.complete():
            self.confirm = None
            self._settle(confirm)

    def dispute(self, member: str, room_index: int) -> None:
        if self.confirmed is None:
            raise InvalidState("there is no proposal to object to yet; answer the open questions")
        self.walk.dispute(member, room_index)
        self.confirmed = None
        self.confirmations = 0
        self._after_walk_step()

    def records(self) -> list[Record]:
        """The walk's labels (without the answers we passed on) and the confirmation answers,
        in the order they were given (sequence numbers are assigned by the caller)."""
        out: list[Record] = []
        pending = list(self.confirm_records)
        for index, r in enumerate(self.walk.records):
            while pending and pending[0][0] <= index:
                out.append(pending.pop(0)[1])
            if r.source != "earlier":
                out.append(replace(r, stage=r.stage + self.stage_offset))
        return out + [record for _, record in pending]

    def _settle(self, confirm: Confirmation) -> None:
        """After a complete confirmation round: certify, ask again, or accept the walk's."""
        proposal = self.walk.proposal()
        assert proposal is not None
        certified = confirm.certified()
        if certified is not None:
            self.confirmed = certified
        elif self.confirmations >= MAX_CONFIRMATIONS:
            self.confirmed = proposal
        else:
            self._confirm_at(confirm.next_prices(), proposal.mesh)

    def _confirm_at(self, prices: tuple[int, ...], mesh: int) -> None:
        self.confirmations += 1
        self.confirm_rounds += 1
        confirm = Confirmation.ask(self.problem, prices, self.confirm_rounds, mesh)
        if confirm.complete():  # everyone decided by the boundary rule
            self._settle(confirm)
        else:
            self.confirm = confirm

    def _after_walk_step(self) -> None:
        """When the walk proposes, confirm at exactly its prices (see :mod:`solver.confirm`)."""
        proposal = self.walk.proposal()
        if proposal is None or self.confirm is not None or self.confirmed is not None:
            return
        self._confirm_at(proposal.prices, proposal.mesh)


def check_room(room_index: object, choices: tuple[int, ...]) -> None:
    """Refuse anything but one of the offered room numbers."""
    if not isinstance(room_index, int) or isinstance(room_index, bool):
        raise InvalidAnswer(f"a room is given by its number, not {room_index!r}")
    if room_index not in choices:
        allowed = ", ".join(str(c) for c in choices)
        raise InvalidAnswer(f"room {room_index} is not one of the offered rooms ({allowed})")
