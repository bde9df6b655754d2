"""Changing an answer: "I pressed the wrong room" while the round is still open.

A change is a new fact: the search is rebuilt with the new room in place of the old
(:mod:`bot.rounds.replay`): everything before the changed answer replays identically, later
answers are kept wherever their question is exactly the same, and the first question that
differs is asked anew. With the parallel method a later answer whose question no longer
exists is kept as a fact ("at these prices they took this room" stays true): it still
counts, its owner is told nothing, and the audit entry lists it as kept. With the walk
(whose answers are labels on its grid) such answers are *set aside*: kept in the questions
table and the log (marked, never deleted) but no longer used, and their owners are told
privately. Open questions the rebuilt search no longer asks are withdrawn; their buttons
answer "this question was replaced" and store nothing. A proposal the change undoes is
withdrawn from the group.

Everything runs in the press's one transaction, so the member's confirmation is only sent
once the change, the rebuilt search and the audit entry are committed together.
"""

from __future__ import annotations

import asyncio
from collections import Counter

from bot.rounds import question_ids, replay
from bot.rounds.asking import sync_search
from bot.rounds.buttons import issue_choice
from bot.rounds.context import Context
from bot.rounds.errors import NotAllowed, RefusalCode, StaleAction
from bot.rounds.events import Actor
from bot.rounds.messages import (
    Action,
    ChangeFacts,
    Kind,
    Outgoing,
    Recipient,
    SplitNoteFacts,
)
from bot.rounds.permissions import require_member
from bot.rounds.phases import Phase, Step, transition
from bot.rounds.records import AuditKind, QuestionRecord, RoundRecord, TimerKind
from solver import Proposal

#: Phases in which answers may still change: before everyone has agreed.
CHANGEABLE = (Phase.ASKING, Phase.PROPOSED)
#: At most this many of a member's latest answers get a change button in their list.
LISTED = 8


async def _own_answer(ctx: Context, record: RoundRecord, actor: Actor, qid: str) -> QuestionRecord:
    require_member(await ctx.tx.members(record.id), actor)
    if record.phase not in CHANGEABLE:
        raise StaleAction(
            f"the round is {record.phase.in_words}, so its answers can no longer change"
        )
    stored = await ctx.tx.question(record.id, qid)
    if stored is None or stored.user_id != actor.user_id:
        raise NotAllowed("you can change only your own answers", RefusalCode.NOT_YOURS)
    if stored.answered_at is None or stored.room is None:
        raise StaleAction("that question has no answer yet; answer it with its own buttons")
    if stored.withdrawn_at is not None:
        raise StaleAction(
            "that answer is no longer used (an earlier change replaced its question); "
            "see /myanswers for the answers that count"
        )
    return stored


async def offer(ctx: Context, record: RoundRecord, actor: Actor, qid: str) -> None:
    """Show the answer again with a button for every other room it could have been."""
    stored = await _own_answer(ctx, record, actor, qid)
    assert stored.room is not None
    choices = tuple(
        [
            await issue_choice(ctx, record.id, Action.CHANGE_TO, qid, room)
            for room in stored.choices
            if room != stored.room
        ]
    )
    s = record.settings
    facts = ChangeFacts(record.id, s.rooms, s.currency, s.decimals, stored.prices, stored.room)
    ctx.send(Outgoing(Recipient.person(actor.user_id), Kind.CHANGE_PROMPT, facts, choices))


async def change(ctx: Context, record: RoundRecord, actor: Actor, qid: str, room: int) -> None:
    """Take ``room`` as the answer to stored question ``qid`` and rebuild the search."""
    stored = await _own_answer(ctx, record, actor, qid)
    assert stored.room is not None
    if room == stored.room:
        raise StaleAction("that is already your answer; nothing changed")
    if room not in stored.choices:
        raise StaleAction("that room was not offered in this question; nothing changed")
    search = await ctx.search(record)
    where = replay.find_answer(
        search, question_ids.search_id(qid), str(stored.user_id), stored.prices
    )
    if where is None:
        raise StaleAction("the search no longer uses that answer; nothing changed")
    before = search.proposal()
    try:
        result = await asyncio.to_thread(replay.rebuild, search, where, room, prices=stored.prices)
    except replay.CannotReplay as exc:
        raise StaleAction(
            "that answer can no longer be changed in this round; ask the admin to start a "
            f"new round if it matters ({exc})"
        ) from exc
    ctx.hold_new_search(record, result.search)
    all_stored = await ctx.tx.questions(record.id)
    await ctx.tx.retract_answer(record.id, qid, ctx.now)
    now_qid = question_ids.fresh_id(all_stored, question_ids.search_id(qid))
    await ctx.tx.insert_question(
        QuestionRecord(
            round_id=record.id,
            qid=now_qid,
            user_id=stored.user_id,
            prices=stored.prices,
            choices=stored.choices,
            asked_at=stored.asked_at,
            answered_at=ctx.now,
            room=room,
        )
    )
    owners = await _set_aside(ctx, record, all_stored, result.dropped_answers, qid)
    await ctx.audit(
        record.id,
        AuditKind.ANSWER_CHANGED,
        actor.user_id,
        qid=qid,
        now=now_qid,
        prices=stored.prices,
        room=room,
        was=stored.room,
        set_aside=sorted(_stored_ids(all_stored, result.dropped_answers, qid)),
        kept_as_facts=sorted(_stored_ids(all_stored, result.kept_answers, qid)),
        objections_set_aside=[list(o) for o in result.dropped_objections],
    )
    s = record.settings
    facts = ChangeFacts(
        record.id,
        s.rooms,
        s.currency,
        s.decimals,
        stored.prices,
        stored.room,
        room,
        len(result.dropped_answers),
        len(result.dropped_objections),
    )
    again = await issue_choice(ctx, record.id, Action.CHANGE_ANSWER, now_qid)
    ctx.send(Outgoing(Recipient.person(actor.user_id), Kind.ANSWER_CHANGED, facts, (again,)))
    for user_id, count in owners.items():
        if user_id != actor.user_id:
            note = ChangeFacts(record.id, s.rooms, s.currency, s.decimals, (), 0, None, count)
            ctx.send(Outgoing(Recipient.person(user_id), Kind.ANSWERS_SET_ASIDE, note))
    await _after_change(ctx, record, before)


def _stored_ids(
    stored: list[QuestionRecord], answers: list[replay.Given], changed_qid: str
) -> list[str]:
    """The live stored rows of ``answers`` (same search id, owner and prices)."""
    wanted = {(a.question_id, a.member, a.prices) for a in answers}
    return [
        q.qid
        for q in stored
        if q.answered_at is not None
        and q.withdrawn_at is None
        and q.qid != changed_qid
        and (question_ids.search_id(q.qid), str(q.user_id), q.prices) in wanted
    ]


async def _set_aside(
    ctx: Context,
    record: RoundRecord,
    stored: list[QuestionRecord],
    dropped: list[replay.Given],
    changed_qid: str,
) -> Counter[int]:
    """Mark answers whose question is gone and that the search could not keep; how many
    per owner."""
    owners: Counter[int] = Counter()
    gone = set(_stored_ids(stored, dropped, changed_qid))
    for q in stored:
        if q.qid in gone:
            await ctx.tx.retract_answer(record.id, q.qid, ctx.now)
            await ctx.audit(record.id, AuditKind.ANSWER_SET_ASIDE, q.user_id, qid=q.qid)
            owners[q.user_id] += 1
    return owners


async def _after_change(ctx: Context, record: RoundRecord, before: Proposal | None) -> None:
    """Withdraw a proposal the change undid, then ask what the rebuilt search asks."""
    search = await ctx.search(record)
    now = search.proposal()
    unchanged = before is not None and now is not None and replay.same_split(before, now)
    if record.phase is Phase.PROPOSED and not unchanged:
        phase = transition(record.phase, Step.ANSWER_CHANGED)
        await ctx.tx.update_round(record.id, at=ctx.now, phase=phase)
        await ctx.tx.clear_accepted(record.id)
        await ctx.tx.drop_timers(record.id, [TimerKind.REMINDER])
        note = SplitNoteFacts(record.id, record.proposal_no)
        ctx.send(Outgoing(Recipient.group(record.group_id), Kind.SPLIT_WITHDRAWN, note))
    current = await ctx.tx.round_by_id(record.id)
    assert current is not None
    if current.phase is Phase.PROPOSED:
        await ctx.save_search(record.id, search)
        return
    await sync_search(ctx, current, search)
