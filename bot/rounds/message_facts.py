"""Builders that turn stored records into the facts an outgoing message carries.

See :class:`~bot.rounds.messages.Outgoing`.

They decide what the group may see: the division and the promise behind it, never anyone's
individual answers.
"""

from __future__ import annotations

from collections.abc import Sequence

from bot.rounds.messages import (
    AgreementFacts,
    AgreementLine,
    DivisionFacts,
    DivisionLine,
    QuestionFacts,
    RoundFacts,
)
from bot.rounds.records import MemberRecord, RoundRecord
from bot.rounds.repriced_search import RepricedProposal
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
        shared=s.shared,
        per_person=s.per_person,
        common=s.common,
        empty_allowed=s.empty_allowed,
        one_by_one=s.method == "walk",
    )


def question_facts(
    record: RoundRecord,
    question: Question,
    number: int,
    round_number: int | None = None,
    expected_rounds: int | None = None,
) -> QuestionFacts:
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
        round_number=round_number,
        expected_rounds=expected_rounds,
    )


def shared_by_member(record: RoundRecord, members: Sequence[MemberRecord]) -> dict[int, int]:
    """Each member's part of the shared costs, by user id (joining order takes the odd units)."""
    parts = record.settings.shared_parts(len(members))
    return {m.user_id: part for m, part in zip(members, parts, strict=True)}


def placements(
    record: RoundRecord, members: list[MemberRecord], proposal: Proposal
) -> list[tuple[MemberRecord, int, int]]:
    """Who takes which let room and their shared part, in room order (proposals, agreements)."""
    by_id = {str(m.user_id): m for m in members}
    shared = shared_by_member(record, members)
    ordered = sorted(proposal.assignment.items(), key=lambda item: item[1])
    return [(by_id[member], room, shared[by_id[member].user_id]) for member, room in ordered]


def division_facts(
    record: RoundRecord, members: list[MemberRecord], proposal: Proposal, proposal_no: int
) -> DivisionFacts:
    s = record.settings
    lines = tuple(
        DivisionLine(
            member=who.display_name,
            user_id=who.user_id,
            room_index=room,
            room=s.rooms[room],
            price=proposal.prices[room],
            shared=part,
        )
        for who, room, part in placements(record, members, proposal)
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
        shared_total=sum(line.shared for line in lines),
        empty_rooms=tuple(s.rooms[r] for r in proposal.empty_rooms),
        empty_prices=tuple(proposal.prices[r] for r in proposal.empty_rooms),
        exact=all(e.prices == proposal.prices for e in proposal.evidence),
        previous_rent=proposal.previous_rent if isinstance(proposal, RepricedProposal) else None,
    )


def agreement_facts(
    record: RoundRecord, members: list[MemberRecord], proposal: Proposal
) -> AgreementFacts:
    """The written agreement of a settled round: the split, the evidence, who agreed when.

    Only each member's evidence (the answer that puts them in their room) is included, never
    any other answer.
    """
    s = record.settings
    evidence = {e.member: e for e in proposal.evidence}
    lines = tuple(
        AgreementLine(
            member=who.display_name,
            user_id=who.user_id,
            room_index=room,
            room=s.rooms[room],
            price=proposal.prices[room],
            shared=part,
            accepted_at=who.accepted_at or record.updated_at,
            evidence_prices=evidence[str(who.user_id)].prices,
        )
        for who, room, part in placements(record, members, proposal)
    )
    return AgreementFacts(
        round_id=record.id,
        group_id=record.group_id,
        settled_at=record.updated_at,
        rent=s.rent,
        currency=s.currency,
        decimals=s.decimals,
        rooms=s.rooms,
        common=s.common,
        lines=lines,
        empty_rooms=tuple(s.rooms[r] for r in proposal.empty_rooms),
        empty_prices=tuple(proposal.prices[r] for r in proposal.empty_rooms),
        shared=s.shared,
        per_person=s.per_person,
        tolerance=s.tolerance,
        envy_bound=proposal.envy_bound,
        **_repriced_from(proposal),
    )


def _repriced_from(proposal: Proposal) -> dict[str, int]:
    """A re-priced agreement names the agreement it re-prices (its total and date)."""
    if not isinstance(proposal, RepricedProposal):
        return {}
    return {
        "previous_rent": proposal.previous_rent,
        "previous_settled_at": proposal.previous_settled_at,
    }


def question_ref(round_id: int, qid: str) -> str:
    """The reference the adapter reports back with the sent message id."""
    return f"{round_id}:{qid}"
