"""Timers: reminders to members, a nudge to the admin, and the round's lapse.

Timers live in the database, so they survive restarts; the adapter asks for
:meth:`~bot.rounds.engine.Engine.pending_timers` at start-up to rebuild its job queue and sends a
:class:`~bot.rounds.events.Tick` when one is due. Each timer fires at most once (``fired_at``), and
firing re-checks that it still matters (the question may have been answered meanwhile).
"""

from __future__ import annotations

from bot.rounds.asking import question_message
from bot.rounds.buttons import issue_choice
from bot.rounds.context import Context
from bot.rounds.message_facts import division_facts, round_facts
from bot.rounds.messages import Action, Choice, Kind, Outgoing, Recipient, WaitingFacts
from bot.rounds.phases import Phase, Step, transition
from bot.rounds.question_ids import as_stored, search_id
from bot.rounds.records import AuditKind, RoundRecord, TimerKind, TimerRecord
from bot.rounds.same_split import last_choice_due


async def fire_due(ctx: Context) -> None:
    """Fire every timer due at ``ctx.now``, oldest first."""
    for timer in await ctx.tx.due_timers(ctx.now):
        record = await ctx.tx.round_by_id(timer.round_id)
        await ctx.tx.mark_fired(timer.id, ctx.now)
        if record is None or not record.phase.is_open:
            continue
        if timer.kind == TimerKind.REMINDER:
            await _remind(ctx, record, timer)
        elif timer.kind == TimerKind.HOLD_UP:
            await _hold_up(ctx, record)
        elif timer.kind == TimerKind.LAPSE:
            await _lapse(ctx, record)


async def _remind(ctx: Context, record: RoundRecord, timer: TimerRecord) -> None:
    if timer.user_id is None:
        return
    if timer.ref.startswith("p"):
        await _remind_to_vote(ctx, record, timer.user_id, timer.ref[1:])
        return
    if record.phase is not Phase.ASKING:
        return
    search = await ctx.search(record)
    for question in search.open_questions():
        if question.id == search_id(timer.ref) and int(question.member) == timer.user_id:
            shown = as_stored(question, timer.ref)
            ctx.send(await question_message(ctx, record, search, shown, Kind.REMINDER))
            await ctx.audit(record.id, AuditKind.REMINDED, timer.user_id, qid=question.id)


async def _remind_to_vote(ctx: Context, record: RoundRecord, user_id: int, ref: str) -> None:
    if record.phase is not Phase.PROPOSED or ref != str(record.proposal_no):
        return
    members = await ctx.tx.members(record.id)
    if any(m.user_id == user_id and m.accepted_at is None for m in members):
        proposal = (await ctx.search(record)).proposal()
        assert proposal is not None
        choices: tuple[Choice, ...] = (await issue_choice(ctx, record.id, Action.ACCEPT, ref),)
        if not await last_choice_due(ctx, record):  # objections used up: agree, or wait
            choices += (await issue_choice(ctx, record.id, Action.OBJECT, ref),)
        facts = division_facts(record, members, proposal, record.proposal_no)
        ctx.send(Outgoing(Recipient.person(user_id), Kind.REMINDER, facts, choices))
        await ctx.audit(record.id, AuditKind.REMINDED, user_id, proposal_no=ref)


async def _hold_up(ctx: Context, record: RoundRecord) -> None:
    members = await ctx.tx.members(record.id)
    names = {str(m.user_id): m.display_name for m in members}
    if record.phase is Phase.ASKING:
        waiting = [names[q.member] for q in (await ctx.search(record)).open_questions()]
    elif record.phase is Phase.PROPOSED:
        waiting = [m.display_name for m in members if m.accepted_at is None]
    else:
        return
    facts = WaitingFacts(record.id, tuple(waiting), record.phase.value, record.updated_at)
    ctx.send(Outgoing(Recipient.person(record.admin_id), Kind.HOLD_UP, facts))
    await ctx.audit(record.id, AuditKind.HOLD_UP, None, waiting=waiting)


async def _lapse(ctx: Context, record: RoundRecord) -> None:
    phase = transition(record.phase, Step.DEADLINE_PASSED)
    await ctx.tx.update_round(record.id, at=ctx.now, phase=phase)
    await ctx.tx.drop_timers(record.id)
    await ctx.audit(record.id, AuditKind.LAPSED, None)
    ctx.ended.add(record.id)
    current = await ctx.tx.round_by_id(record.id)
    assert current is not None
    members = await ctx.tx.members(record.id)
    ctx.send(Outgoing(Recipient.group(record.group_id), Kind.LAPSED, round_facts(current, members)))
