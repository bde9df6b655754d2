"""The search of a round that starts with a proposal: an agreed split re-priced for a new rent.

A rent change (:mod:`bot.rounds.rent_change`) creates a round with the same members and rooms
whose first proposal is the last agreement with the change spread equally
(:mod:`bot.rounds.repricing`). Everything else about a proposed round works through the
round's search (acceptance, reminders, the picture, a group's move to a supergroup), so this
stand-in plays that part: it holds the re-priced proposal, asks no questions and is stored in
the round's search column under a format name of its own. An objection does not go through
:meth:`RepricedSearch.dispute`: the rent change's own handler replaces this stand-in by a real
search that starts from the objection (see :func:`bot.rounds.rent_change.object_with_room`).
"""

from __future__ import annotations

import json
from dataclasses import dataclass
from typing import Any

from solver import Counters, InvalidAnswer, InvalidState, Problem, Proposal, Question
from solver.protocol import Record

FORMAT_NAME = "flatpact-repriced"
#: ``to_json`` writes the format name first, so a stored search is recognised by its start
#: without parsing a (possibly large) walk's JSON twice.
_STARTS = f'{{"format":"{FORMAT_NAME}"'


@dataclass(frozen=True, slots=True, kw_only=True)
class RepricedProposal(Proposal):
    """A proposal re-priced from an earlier agreement: which one, and its total.

    ``evidence`` is the earlier agreement's (each member's supporting answer, at the earlier
    prices), so it is honest about when and at which prices each room was chosen.
    """

    previous_round: int
    previous_rent: int
    previous_settled_at: int


class RepricedSearch:
    """A search that is already at its proposal and asks nothing (see the module doc)."""

    def __init__(self, problem: Problem, proposal: RepricedProposal) -> None:
        self.problem = problem
        self._proposal = proposal
        #: The answers it rests on: each member's supporting answer from the agreement it
        #: re-prices (a re-run after this round can reuse them, as from any agreed round).
        self.records: list[Record] = [
            Record(k + 1, 0, e.member, e.prices, e.room, "earlier", None)
            for k, e in enumerate(proposal.evidence)
        ]
        self.check()

    def open_questions(self) -> list[Question]:
        return []

    def answer(self, question_id: str, room_index: int) -> None:
        raise InvalidAnswer("this round asks no questions; agree to the split or ask to swap")

    def proposal(self) -> Proposal | None:
        return self._proposal

    def dispute(self, member: str, room_index: int) -> None:
        raise InvalidState("an objection to a re-priced split starts a new search; not here")

    @property
    def counters(self) -> Counters:
        return Counters()

    def questions_per_member(self) -> dict[str, int]:
        return dict.fromkeys(self.problem.members, 0)

    def check(self) -> None:
        """Every member has a room of their own and the let rooms add up to the rent."""
        p = self._proposal
        if sorted(p.assignment) != sorted(self.problem.members):
            raise InvalidState("a re-priced proposal must place exactly the round's members")
        rooms = list(p.assignment.values())
        if len(set(rooms)) != len(rooms) or len(p.prices) != self.problem.size:
            raise InvalidState("a re-priced proposal must give each member a different room")
        if sum(p.prices[room] for room in rooms) != self.problem.rent:
            raise InvalidState("a re-priced proposal's let rooms must add up to the rent")

    def to_json(self) -> str:
        data: dict[str, Any] = {
            "format": FORMAT_NAME,
            "problem": self.problem.to_dict(),
            "proposal": self._proposal.to_dict(),
            "previous_round": self._proposal.previous_round,
            "previous_rent": self._proposal.previous_rent,
            "previous_settled_at": self._proposal.previous_settled_at,
        }
        return json.dumps(data, separators=(",", ":"))

    @classmethod
    def from_json(cls, text: str) -> RepricedSearch:
        try:
            data = json.loads(text)
            plain = Proposal.from_dict(data["proposal"])
            proposal = RepricedProposal(
                assignment=plain.assignment,
                prices=plain.prices,
                evidence=plain.evidence,
                envy_bound=plain.envy_bound,
                mesh=plain.mesh,
                empty_rooms=plain.empty_rooms,
                previous_round=int(data["previous_round"]),
                previous_rent=int(data["previous_rent"]),
                previous_settled_at=int(data["previous_settled_at"]),
            )
            return cls(Problem.from_dict(data["problem"]), proposal)
        except (KeyError, TypeError, ValueError) as exc:
            raise InvalidState(f"saved re-priced proposal is damaged: {exc}") from exc


def is_repriced(text: str) -> bool:
    """True for a stored :class:`RepricedSearch` (by its leading format name)."""
    return text.startswith(_STARTS)
