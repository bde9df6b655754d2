"""Objections that end: a split is never posted twice, and objecting has a limit.

An objection is a fact for the search, which asks again. When the answers lead back to a
split the group has already seen (the same rooms for the same people at the same prices), the
objection changed nothing, and posting the split again would only wipe everyone's agreement.
So instead:

* the group gets one short note that the split above stands (not the split again), with fresh
  buttons to agree or object under a new proposal number;
* the objector is asked privately which of their two answers is right, side by side: "at these
  prices you took A; at (almost) the same prices you now prefer B". Keeping A sets the
  objection aside; choosing B changes the earlier answer (:mod:`bot.rounds.corrections`),
  which gives the search something new to work with.

After ``fruitless_objections`` such returns, or ``objection_limit`` objections in all, the
group gets its last choice in plain words: agree to the best split found, or an admin ends
the round. No more objections are taken, so every round ends within a bounded number of
group messages whatever anyone answers.
"""

from __future__ import annotations

import json
from typing import Any

from bot.rounds.buttons import issue_choice
from bot.rounds.context import Context
from bot.rounds.messages import (
    Action,
    Choice,
    DisagreeFacts,
    Kind,
    Outgoing,
    Recipient,
    SplitNoteFacts,
)
from bot.rounds.phases import Step, transition
from bot.rounds.records import AuditKind, AuditRecord, RoundRecord, TimerKind
from solver import Proposal


def _details(entries: list[AuditRecord]) -> list[dict[str, Any]]:
    return [json.loads(e.detail) for e in entries]


async def earlier_same(ctx: Context, record: RoundRecord, proposal: Proposal) -> int | None:
    """The number of an earlier proposal of this round with exactly this split, if any."""
    for detail in _details(await ctx.tx.audit_kinds(record.id, [AuditKind.PROPOSAL])):
        same_rooms = detail["assignment"] == dict(proposal.assignment)
        if same_rooms and list(detail["prices"]) == list(proposal.prices):
            return int(detail["proposal_no"])
    return None


async def objections_so_far(ctx: Context, record: RoundRecord) -> tuple[int, int]:
    """(objections in all, objections that led back to a split already seen)."""
    kinds = [AuditKind.OBJECTION, AuditKind.SAME_SPLIT]
    entries = await ctx.tx.audit_kinds(record.id, kinds)
    made = sum(1 for e in entries if e.kind == AuditKind.OBJECTION)
    return made, sum(1 for e in entries if e.kind == AuditKind.SAME_SPLIT)


async def last_choice_due(ctx: Context, record: RoundRecord) -> bool:
    """No more objections: the group now agrees to the split or an admin ends the round."""
    made, fruitless = await objections_so_far(ctx, record)
    config = ctx.config
    return made >= config.objection_limit or fruitless >= config.fruitless_objections


async def vote_buttons(ctx: Context, record: RoundRecord, number: int) -> tuple[Choice, ...]:
    """Agree and object, or, once objections are used up, agree and end the round."""
    ref = str(number)
    last = await last_choice_due(ctx, record)
    second = Action.END_ROUND if last else Action.OBJECT
    return (
        await issue_choice(ctx, record.id, Action.ACCEPT, ref),
        await issue_choice(ctx, record.id, second, ref),
    )


async def remind_to_agree(ctx: Context, record: RoundRecord, number: int) -> None:
    """One reminder per member for split ``number`` (dropped once they agree or it goes)."""
    for member in await ctx.tx.members(record.id):
        await ctx.tx.add_timer(
            record.id,
            TimerKind.REMINDER,
            member.user_id,
            f"p{number}",
            ctx.now + ctx.config.reminder_after,
        )


async def came_back(ctx: Context, record: RoundRecord, proposal: Proposal) -> bool:
    """If ``proposal`` repeats an earlier split, handle it here (True); else post as usual."""
    same_as = await earlier_same(ctx, record, proposal)
    if same_as is None:
        return False
    number = record.proposal_no + 1
    phase = transition(record.phase, Step.WALK_PROPOSED)
    await ctx.tx.update_round(record.id, at=ctx.now, phase=phase, proposal_no=number)
    await ctx.tx.clear_accepted(record.id)
    await ctx.audit(record.id, AuditKind.SAME_SPLIT, None, proposal_no=number, same_as=same_as)
    await remind_to_agree(ctx, record, number)
    made, _ = await objections_so_far(ctx, record)
    last = await last_choice_due(ctx, record)
    note = SplitNoteFacts(record.id, number, same_as, made, ctx.config.objection_limit)
    kind = Kind.LAST_CHOICE if last else Kind.SAME_SPLIT
    if last:
        await ctx.audit(record.id, AuditKind.LAST_CHOICE, None, proposal_no=number)
    buttons = await vote_buttons(ctx, record, number)
    ctx.send(Outgoing(Recipient.group(record.group_id), kind, note, buttons))
    await _ask_objector(ctx, record, proposal, number)
    return True


async def _ask_objector(ctx: Context, record: RoundRecord, proposal: Proposal, number: int) -> None:
    """The last objector sees their two answers side by side and says which is right."""
    objections = await ctx.tx.audit_kinds(record.id, [AuditKind.OBJECTION])
    if not objections or objections[-1].user_id is None:
        return
    user_id = objections[-1].user_id
    said = json.loads(objections[-1].detail)
    evidence = next((e for e in proposal.evidence if e.member == str(user_id)), None)
    if evidence is None:
        return
    prefer_room = int(said["room"])
    stored = [
        q
        for q in await ctx.tx.questions(record.id)
        if q.user_id == user_id
        and q.answered_at is not None
        and q.withdrawn_at is None
        and q.prices == evidence.prices
        and q.room == evidence.room
        and prefer_room in q.choices
    ]
    choices = [await issue_choice(ctx, record.id, Action.KEEP_ANSWER, str(number))]
    if stored:
        choices.append(
            await issue_choice(ctx, record.id, Action.CHANGE_TO, stored[-1].qid, prefer_room)
        )
    s = record.settings
    facts = DisagreeFacts(
        record.id,
        number,
        s.rooms,
        s.currency,
        s.decimals,
        evidence.prices,
        evidence.room,
        tuple(int(p) for p in said["prices"]),
        prefer_room,
        bool(stored),
    )
    ctx.send(Outgoing(Recipient.person(user_id), Kind.ANSWERS_DISAGREE, facts, tuple(choices)))
