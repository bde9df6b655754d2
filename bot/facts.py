"""Builders that turn stored records into the facts an :class:`~bot.messages.Outgoing` carries.

They decide what the group may see: the division and the promise behind it, never anyone's
individual answers.
"""

from __future__ import annotations

from bot.messages import DivisionFacts, DivisionLine, QuestionFacts, RoundFacts
from bot.records import MemberRecord, RoundRecord
from solver import Proposal, Question


def round_facts(record: RoundRecord, members: list[MemberRecord]) -> RoundFacts:
    s = record.settings
    return RoundFacts(
        round_id=record.id,
        group_id=record.group_id,
        phase=record.phase.value,
        rent=s.rent,
        currency=s.currency,
        decimals=s.decimals,
        rooms=s.rooms,
        tolerance=s.tolerance,
        floor=s.floor,
        members=tuple(m.display_name for m in members),
        member_ids=tuple(m.user_id for m in members),
    )


def question_facts(record: RoundRecord, question: Question, number: int) -> QuestionFacts:
    s = record.settings
    return QuestionFacts(
        round_id=record.id,
        question_ref=question_ref(record.id, question.id),
        rooms=s.rooms,
        prices=question.prices,
        currency=s.currency,
        decimals=s.decimals,
        choices=question.choices,
        number_for_member=number,
    )


def division_facts(
    record: RoundRecord, members: list[MemberRecord], proposal: Proposal, proposal_no: int
) -> DivisionFacts:
    s = record.settings
    names = {str(m.user_id): m for m in members}
    lines = tuple(
        DivisionLine(
            member=names[member].display_name,
            user_id=names[member].user_id,
            room_index=room,
            room=s.rooms[room],
            price=proposal.prices[room],
        )
        for member, room in sorted(proposal.assignment.items(), key=lambda item: item[1])
    )
    return DivisionFacts(
        round_id=record.id,
        proposal_no=proposal_no,
        rent=s.rent,
        currency=s.currency,
        decimals=s.decimals,
        lines=lines,
        tolerance=s.tolerance,
        envy_bound=proposal.envy_bound,
        accepted=sum(1 for m in members if m.accepted_at is not None),
        members=len(members),
    )


def question_ref(round_id: int, qid: str) -> str:
    """The reference the adapter reports back with the sent message id."""
    return f"{round_id}:{qid}"
