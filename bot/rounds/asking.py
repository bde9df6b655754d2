"""Driving a round's search: questions out, answers in, proposals, acceptances, objections.

Every function runs inside the event's transaction. The order inside each is the order that
keeps storage consistent: the search moves, its step (or a new snapshot,
:mod:`bot.rounds.search_steps`) and the answer are written together, and only then are the
messages that announce them queued. With the parallel search a whole round
of questions goes out at once (one per member); with the search, one question at a time.

The search's numerics (learning between rounds, linear programmes) run in a worker thread
(:meth:`Context.step <bot.rounds.context.Context.step>`), so a heavy step never stalls the
event loop that answers other groups' button presses.
"""

from __future__ import annotations

from dataclasses import replace

from bot.rounds import question_ids, same_split
from bot.rounds.agreement_records import record_agreement
from bot.rounds.buttons import issue_choice
from bot.rounds.context import Context
from bot.rounds.errors import NotAllowed, RefusalCode, StaleAction
from bot.rounds.events import Actor
from bot.rounds.message_facts import (
    agreement_facts,
    division_facts,
    question_facts,
    question_ref,
    round_facts,
)
from bot.rounds.messages import (
    Action,
    Kind,
    Outgoing,
    ProgressFacts,
    PromptFacts,
    Recipient,
)
from bot.rounds.permissions import require_admin, require_member
from bot.rounds.phases import Phase, Step, transition
from bot.rounds.records import AuditKind, QuestionRecord, RoundRecord, TimerKind
from bot.rounds.search_steps import Answered, Disputed, RoundClosed
from bot.rounds.searches import AnySearch, expected_rounds, records_of, round_of
from solver import InvalidAnswer, InvalidState, ParallelSearch, Proposal, Question
from solver.problem import is_placeholder


async def start_search(ctx: Context, record: RoundRecord, search: AnySearch) -> None:
    """The first questions of a new search (the start may already infer some answers)."""
    ctx.hold_new_search(record, search)
    await log_inferred(ctx, record, search, since=0)
    await sync_search(ctx, record, search)


async def sync_search(ctx: Context, record: RoundRecord, search: AnySearch) -> None:
    """Save the search, then ask any newly opened question or announce a new proposal."""
    await ctx.save_search(record.id, search)
    limit = ctx.config.max_questions_per_member
    if search.proposal() is None and max(search.questions_per_member().values()) > limit:
        await _stop_at_limit(ctx, record, search)
        return
    for question in search.open_questions():
        same_id = await ctx.tx.question(record.id, question.id)
        if same_id is None:  # the usual case: a new question under the search's own id
            await ask(ctx, record, search, question)
        elif not (same_id.open and question_ids.same_question(same_id, question)):
            stored = await ctx.tx.questions(record.id)  # after a change: ids are reused
            if question_ids.stored_open(stored, question) is None:
                qid = question_ids.fresh_id(stored, question.id)
                await ask(ctx, record, search, question_ids.as_stored(question, qid))
    await withdraw_unneeded(ctx, record, search)
    proposal = search.proposal()
    current = await ctx.tx.round_by_id(record.id)
    if proposal is not None and current is not None and current.phase is Phase.ASKING:
        await propose(ctx, current, proposal)


async def _stop_at_limit(ctx: Context, record: RoundRecord, search: AnySearch) -> None:
    """Someone would get more questions than the limit: the round stops, clearly, for all."""
    phase = transition(record.phase, Step.DEADLINE_PASSED)
    await ctx.tx.update_round(record.id, at=ctx.now, phase=phase)
    await ctx.tx.drop_timers(record.id)
    await ctx.audit(
        record.id, AuditKind.STOPPED_AT_LIMIT, None, limit=ctx.config.max_questions_per_member
    )
    ctx.ended.add(record.id)
    current = await ctx.tx.round_by_id(record.id)
    assert current is not None
    for stored in await ctx.tx.questions(record.id):
        if stored.open:
            await ctx.tx.withdraw_question(record.id, stored.qid, ctx.now)
            facts = ProgressFacts(record.id, 0, 0, None, question_ref(record.id, stored.qid))
            ctx.send(Outgoing(Recipient.person(stored.user_id), Kind.WITHDRAWN, facts))
    stopped = replace(
        round_facts(current, await ctx.tx.members(record.id)),
        question_limit=ctx.config.max_questions_per_member,
    )
    ctx.send(Outgoing(Recipient.group(record.group_id), Kind.STOPPED_AT_LIMIT, stopped))


async def withdraw_unneeded(ctx: Context, record: RoundRecord, search: AnySearch) -> None:
    """Close stored questions the search no longer needs (a look-ahead guess that missed).

    The member's message loses its buttons, no reminder follows, and a late press is refused.
    """
    still_open = search.open_questions()
    for stored in await ctx.tx.open_questions(record.id):
        if not any(question_ids.same_question(stored, q) for q in still_open):
            await ctx.tx.withdraw_question(record.id, stored.qid, ctx.now)
            await ctx.tx.drop_timers(record.id, [TimerKind.REMINDER], ref=stored.qid)
            await ctx.audit(record.id, AuditKind.WITHDRAWN, stored.user_id, qid=stored.qid)
            facts = ProgressFacts(record.id, 0, 0, None, question_ref(record.id, stored.qid))
            ctx.send(Outgoing(Recipient.person(stored.user_id), Kind.WITHDRAWN, facts))


async def ask(ctx: Context, record: RoundRecord, search: AnySearch, question: Question) -> None:
    user_id = int(question.member)
    await ctx.tx.insert_question(
        QuestionRecord(
            round_id=record.id,
            qid=question.id,
            user_id=user_id,
            prices=question.prices,
            choices=question.choices,
            asked_at=ctx.now,
            answered_at=None,
            room=None,
        )
    )
    await ctx.tx.add_timer(
        record.id, TimerKind.REMINDER, user_id, question.id, ctx.now + ctx.config.reminder_after
    )
    await ctx.audit(record.id, AuditKind.QUESTION, user_id, qid=question.id, prices=question.prices)
    ctx.send(await question_message(ctx, record, search, question, Kind.QUESTION))


async def question_message(
    ctx: Context, record: RoundRecord, search: AnySearch, question: Question, kind: Kind
) -> Outgoing:
    """A question (or its reminder) with one button per room on offer."""
    choices = [
        await issue_choice(ctx, record.id, Action.ANSWER, question.id, room)
        for room in question.choices
    ]
    number = search.questions_per_member()[question.member]
    facts = question_facts(record, question, number, round_of(search), expected_rounds(search))
    return Outgoing(
        Recipient.person(int(question.member)),
        kind,
        facts,
        tuple(choices),
        ref=facts.question_ref,
    )


async def propose(
    ctx: Context, record: RoundRecord, proposal: Proposal, step: Step = Step.WALK_PROPOSED
) -> None:
    """Announce a division to the group and open acceptance (``step``: how it came about;
    never the same split twice)."""
    if await same_split.came_back(ctx, record, proposal):
        return
    number = record.proposal_no + 1
    phase = transition(record.phase, step)
    await ctx.tx.update_round(record.id, at=ctx.now, phase=phase, proposal_no=number)
    await ctx.tx.clear_accepted(record.id)
    await ctx.audit(
        record.id,
        AuditKind.PROPOSAL,
        None,
        proposal_no=number,
        assignment=dict(proposal.assignment),
        prices=proposal.prices,
        envy_bound=proposal.envy_bound,
    )
    await same_split.remind_to_agree(ctx, record, number)
    members = await ctx.tx.members(record.id)
    choices = await same_split.vote_buttons(ctx, record, number)
    facts = division_facts(record, members, proposal, number)
    if any(c.action is Action.END_ROUND for c in choices):
        facts = replace(facts, last_choice=True)
    ctx.send(Outgoing(Recipient.group(record.group_id), Kind.PROPOSAL, facts, choices))


async def answer(ctx: Context, record: RoundRecord, actor: Actor, qid: str, room: int) -> None:
    """A member answers their own open question; everything else is refused unchanged."""
    members = await ctx.tx.members(record.id)
    require_member(members, actor)
    stored = await ctx.tx.question(record.id, qid)
    if stored is None:
        raise StaleAction("that question is unknown; use the buttons of your latest question")
    if stored.user_id != actor.user_id:
        raise NotAllowed(
            "that question was sent to another member; answer only your own questions",
            RefusalCode.NOT_YOURS,
        )
    if stored.answered_at is not None:
        raise StaleAction(
            f"you already answered this question ({record.settings.rooms[stored.room or 0]}); "
            "your answer is stored, nothing changed"
        )
    if stored.withdrawn_at is not None:
        raise StaleAction(
            "that question was replaced or is no longer needed (answers led elsewhere or an "
            "answer was changed); nothing was stored. Answer your latest question"
        )
    if record.phase is not Phase.ASKING:
        raise StaleAction("this round is no longer asking questions; nothing changed")
    search = await ctx.search(record)
    before = len(records_of(search))
    try:
        await ctx.step(record.id, Answered(question_ids.search_id(qid), room))
    except (InvalidAnswer, InvalidState) as exc:
        raise StaleAction(f"that answer cannot be used: {exc}") from exc
    await ctx.tx.record_answer(record.id, qid, room, ctx.now)
    await ctx.tx.drop_timers(record.id, [TimerKind.REMINDER], ref=qid)
    await ctx.audit(
        record.id, AuditKind.ANSWER, actor.user_id, qid=qid, prices=stored.prices, room=room
    )
    await log_inferred(ctx, record, search, since=before + 1)
    wrong_room = await issue_choice(ctx, record.id, Action.CHANGE_ANSWER, qid)
    ctx.send(replace(_progress(record, search, actor, room, qid), choices=(wrong_room,)))
    await sync_search(ctx, record, search)


async def next_round(ctx: Context, record: RoundRecord, actor: Actor) -> None:
    """The admin closes the current round with the answers in; the rest keep their questions.

    The search learns from the answers it has and asks the next round of those who answered;
    a member who has not answered keeps their open question (same prices, same buttons) and
    gets the next one after answering it.
    """
    require_admin(record, actor, "move on to the next round")
    if record.phase is not Phase.ASKING:
        raise StaleAction(f"the round is {record.phase.in_words}; there is no round of questions")
    search = await ctx.search(record)
    if round_of(search) is None:
        raise StaleAction("questions go to one of you at a time in this round; nothing to close")
    assert isinstance(search, ParallelSearch)
    before = len(records_of(search))
    try:
        await ctx.step(record.id, RoundClosed())
    except InvalidState as exc:
        raise StaleAction(str(exc)) from exc
    await ctx.audit(record.id, AuditKind.ROUND_CLOSED, actor.user_id)
    await log_inferred(ctx, record, search, since=before)
    await sync_search(ctx, record, search)


def _progress(
    record: RoundRecord, search: AnySearch, actor: Actor, room: int, qid: str
) -> Outgoing:
    asked = [r for r in records_of(search) if r.source == "asked"]
    mine = sum(1 for r in asked if r.member == str(actor.user_id))
    facts = ProgressFacts(
        record.id, len(asked), mine, record.settings.rooms[room], question_ref(record.id, qid)
    )
    return Outgoing(Recipient.person(actor.user_id), Kind.PROGRESS, facts)


async def log_inferred(ctx: Context, record: RoundRecord, search: AnySearch, *, since: int) -> None:
    """Audit answers the search worked out without asking (boundary rule, repeated prices).

    Stand-ins for rooms that stay empty are not people, so their labels are not audited.
    """
    for entry in records_of(search)[since:]:
        if entry.source in ("rule", "repeat") and not is_placeholder(entry.member):
            await ctx.audit(
                record.id,
                AuditKind.INFERRED,
                int(entry.member),
                prices=entry.prices,
                room=entry.room,
                how=entry.source,
            )


def _current_proposal(record: RoundRecord, ref: str, search: AnySearch) -> Proposal:
    proposal = search.proposal()
    if record.phase is not Phase.PROPOSED or ref != str(record.proposal_no) or proposal is None:
        raise StaleAction("that proposal has been replaced or closed; use the latest one")
    return proposal


async def accept(ctx: Context, record: RoundRecord, actor: Actor, ref: str) -> None:
    """A member accepts the current proposal; the last acceptance settles the round."""
    members = await ctx.tx.members(record.id)
    me = require_member(members, actor)
    proposal = _current_proposal(record, ref, await ctx.search(record))
    if me.accepted_at is not None:
        raise StaleAction("you have already accepted this proposal; nothing changed")
    await ctx.tx.set_accepted(record.id, actor.user_id, ctx.now)
    await ctx.tx.drop_timers(record.id, [TimerKind.REMINDER], ref=f"p{ref}")
    await ctx.audit(record.id, AuditKind.ACCEPTED, actor.user_id, proposal_no=record.proposal_no)
    members = await ctx.tx.members(record.id)
    facts = division_facts(record, members, proposal, record.proposal_no)
    if facts.accepted < facts.members:
        ctx.send(Outgoing(Recipient.group(record.group_id), Kind.ACCEPTED, facts))
        return
    phase = transition(record.phase, Step.ALL_ACCEPTED)
    await ctx.tx.update_round(record.id, at=ctx.now, phase=phase)
    ctx.ended.add(record.id)
    await ctx.tx.drop_timers(record.id)
    await ctx.audit(
        record.id,
        AuditKind.AGREEMENT,
        None,
        proposal_no=record.proposal_no,
        assignment=dict(proposal.assignment),
        prices=proposal.prices,
        empty_rooms=list(proposal.empty_rooms),
        shared=facts.shared_total,
    )
    ctx.send(Outgoing(Recipient.group(record.group_id), Kind.SETTLED, facts))
    settled = await ctx.tx.round_by_id(record.id)
    assert settled is not None
    document = agreement_facts(settled, members, proposal)
    await record_agreement(ctx.tx, document, ctx.now)
    ctx.send(Outgoing(Recipient.group(record.group_id), Kind.AGREEMENT, document))


async def begin_objection(ctx: Context, record: RoundRecord, actor: Actor, ref: str) -> None:
    """Step one of an objection: ask the member privately which room they would rather take."""
    members = await ctx.tx.members(record.id)
    me = require_member(members, actor)
    proposal = _current_proposal(record, ref, await ctx.search(record))
    if me.accepted_at is not None:
        raise StaleAction("you have already accepted this proposal; it can no longer be objected")
    if await same_split.last_choice_due(ctx, record):
        raise StaleAction(
            "objections are used up for this round: agree to the split, or an admin ends the "
            "round with the End button or /cancel"
        )
    own = proposal.assignment[str(actor.user_id)]
    choices = tuple(
        [
            await issue_choice(ctx, record.id, Action.PREFER, ref, room)
            for room in range(len(record.settings.rooms))
            if room != own
        ]
    )
    await ctx.audit(record.id, AuditKind.OBJECTION_STARTED, actor.user_id, proposal_no=ref)
    s = record.settings
    facts = PromptFacts(
        record.id, record.proposal_no, s.rooms, proposal.prices, s.currency, s.decimals, own
    )
    ctx.send(Outgoing(Recipient.person(actor.user_id), Kind.ROOM_PROMPT, facts, choices))


async def object_with_room(
    ctx: Context, record: RoundRecord, actor: Actor, ref: str, room: int
) -> None:
    """Step two: the member names the room; the search takes it as a fact and asks again."""
    members = await ctx.tx.members(record.id)
    me = require_member(members, actor)
    search = await ctx.search(record)
    proposal = _current_proposal(record, ref, search)
    if me.accepted_at is not None:
        raise StaleAction("you have already accepted this proposal; it can no longer be objected")
    before = len(records_of(search))
    try:
        await ctx.step(record.id, Disputed(str(actor.user_id), room))
    except (InvalidAnswer, InvalidState) as exc:
        raise StaleAction(f"that objection cannot be used: {exc}") from exc
    current = await uphold_objection(ctx, record, actor, proposal.prices, room)
    await log_inferred(ctx, record, search, since=before + 1)
    await sync_search(ctx, current, search)


async def uphold_objection(
    ctx: Context, record: RoundRecord, actor: Actor, prices: tuple[int, ...], room: int
) -> RoundRecord:
    """The split is off: back to asking, agreements and reminders cleared, the objection in
    the log and a one-line note to the group. Returns the round as it now is."""
    phase = transition(record.phase, Step.OBJECTION_UPHELD)
    await ctx.tx.update_round(record.id, at=ctx.now, phase=phase)
    await ctx.tx.clear_accepted(record.id)
    await ctx.tx.drop_timers(record.id, [TimerKind.REMINDER])
    await ctx.audit(record.id, AuditKind.OBJECTION, actor.user_id, prices=prices, room=room)
    current = await ctx.tx.round_by_id(record.id)
    assert current is not None
    facts = round_facts(current, await ctx.tx.members(record.id))
    ctx.send(Outgoing(Recipient.group(record.group_id), Kind.OBJECTION_NOTED, facts))
    return current
