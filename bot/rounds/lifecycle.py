"""Set-up and lifecycle handlers: configure, open joining, join, leave, begin, cancel, re-run.

Each validates everything before writing anything, so a refusal leaves storage as it was
(the engine also rolls the transaction back, but a handler should not rely on that alone).
"""

from __future__ import annotations

import asyncio
from dataclasses import replace

from bot.rounds import answer_reuse, rough_values
from bot.rounds.asking import start_search
from bot.rounds.buttons import issue_choice
from bot.rounds.context import Context
from bot.rounds.errors import IllegalMove, InvalidSetup, NotAllowed, Refusal, RefusalCode
from bot.rounds.events import Actor, Configure
from bot.rounds.message_facts import round_facts
from bot.rounds.messages import Action, Kind, Outgoing, Recipient
from bot.rounds.names import person_name
from bot.rounds.permissions import require_admin, require_may_start, require_member
from bot.rounds.phases import RERUN_FROM, Phase, Step, transition
from bot.rounds.records import AuditKind, RoundRecord, TimerKind
from bot.rounds.round_settings import RoundSettings, amend_settings, build_settings
from bot.rounds.searches import expected_rounds
from solver import InvalidAnswer, InvalidProblem, Options, start


async def open_round_of(ctx: Context, group_id: int) -> RoundRecord:
    record = await ctx.tx.open_round(group_id)
    if record is None:
        raise Refusal(
            "there is no open round in this group; set one up with the rent and the rooms",
            RefusalCode.NO_ROUND,
        )
    return record


async def announce(ctx: Context, record_id: int, kind: Kind, *choices_for: Action) -> None:
    """Tell the group about the round as it now stands."""
    record = await ctx.tx.round_by_id(record_id)
    assert record is not None
    members = await ctx.tx.members(record.id)
    choices = tuple([await issue_choice(ctx, record.id, action, "") for action in choices_for])
    ctx.send(
        Outgoing(Recipient.group(record.group_id), kind, round_facts(record, members), choices)
    )


async def configure(ctx: Context, event: Configure) -> None:
    """Create a draft, or change the open draft's settings (admin only, drafting only)."""
    record = await ctx.tx.open_round(event.group_id)
    if record is None:
        await _create_draft(ctx, event)
        return
    if event.fresh and record.phase is not Phase.DRAFTING:
        raise IllegalMove(
            f"this group already has a round ({record.phase.in_words}), and it stays as it is; "
            "finish it, or an admin can end it with /cancelround before starting another"
        )
    require_admin(record, event.actor, "change the settings")
    if record.phase not in (Phase.DRAFTING, Phase.GATHERING):
        raise IllegalMove(
            "settings can only change while members are still joining (before the questions "
            f"start), and this round is {record.phase.in_words}; cancel it and start again to "
            "change them"
        )
    settings = amend_settings(record.settings, event.setup)
    joined = len(await ctx.tx.members(record.id))
    if joined > len(settings.rooms):
        raise InvalidSetup(
            f"{joined} members have joined but that leaves {len(settings.rooms)} rooms to let; "
            "keep at least one room per member, or ask someone to /leave first"
        )
    await ctx.tx.update_round(record.id, at=ctx.now, settings=settings)
    await ctx.audit(
        record.id, AuditKind.CONFIGURED, event.actor.user_id, settings=settings.to_json()
    )
    await announce(ctx, record.id, Kind.DRAFT_SAVED)


async def _create_draft(ctx: Context, event: Configure) -> None:
    require_may_start(ctx.config.only_admins_start, event.actor)
    settings = build_settings(event.setup)
    round_id = await ctx.tx.insert_round(
        group_id=event.group_id,
        admin_id=event.actor.user_id,
        settings=settings,
        previous_round=None,
        at=ctx.now,
    )
    await _created(ctx, round_id, event.actor, settings.to_json(), quiet=event.open_now)


async def _created(
    ctx: Context, round_id: int, actor: Actor, settings_json: str, *, quiet: bool = False
) -> None:
    await ctx.tx.add_timer(round_id, TimerKind.LAPSE, None, "", ctx.now + ctx.config.lapse_after)
    await ctx.audit(round_id, AuditKind.ROUND_CREATED, actor.user_id, settings=settings_json)
    if not quiet:
        await announce(ctx, round_id, Kind.DRAFT_SAVED)


async def open_joining(ctx: Context, group_id: int, actor: Actor) -> None:
    record = await open_round_of(ctx, group_id)
    require_admin(record, actor, "open the round for joining")
    phase = transition(record.phase, Step.OPEN_JOINING)
    await ctx.tx.update_round(record.id, at=ctx.now, phase=phase)
    await ctx.audit(record.id, AuditKind.JOINING_OPENED, actor.user_id)
    await announce(ctx, record.id, Kind.JOINING_OPEN, Action.JOIN)


async def join(ctx: Context, record: RoundRecord, actor: Actor) -> None:
    if record.phase is not Phase.GATHERING:
        raise IllegalMove(f"joining is not open: the round is {record.phase.in_words}")
    members = await ctx.tx.members(record.id)
    if any(m.user_id == actor.user_id for m in members):
        raise Refusal("you have already joined this round; nothing changed")
    rooms = len(record.settings.rooms)
    if len(members) >= rooms:
        raise Refusal(
            f"all {rooms} places are taken; one member must leave before you can join",
            RefusalCode.NOT_ALLOWED,
        )
    name = person_name(actor.display_name) or f"member {len(members) + 1}"
    await ctx.tx.add_member(record.id, actor.user_id, name, ctx.now)
    await ctx.audit(record.id, AuditKind.JOINED, actor.user_id, name=name)
    await announce(ctx, record.id, Kind.MEMBER_JOINED)
    await answer_reuse.offer(ctx, record, actor.user_id)
    await rough_values.invite(ctx, record, actor.user_id)


async def leave(ctx: Context, group_id: int, actor: Actor) -> None:
    record = await open_round_of(ctx, group_id)
    if record.phase not in (Phase.DRAFTING, Phase.GATHERING):
        raise IllegalMove(
            "members can only leave before the questions start; ask the admin to cancel instead"
        )
    require_member(await ctx.tx.members(record.id), actor)
    await ctx.tx.remove_member(record.id, actor.user_id)
    await ctx.audit(record.id, AuditKind.LEFT, actor.user_id)
    await announce(ctx, record.id, Kind.MEMBER_LEFT)


async def begin_asking(ctx: Context, group_id: int, actor: Actor) -> None:
    record = await open_round_of(ctx, group_id)
    require_admin(record, actor, "start the questions")
    phase = transition(record.phase, Step.BEGIN_ASKING)
    members = await ctx.tx.members(record.id)
    _check_headcount(record.settings, len(members))
    reuse = await answer_reuse.plan(ctx, record, members)
    try:
        problem = record.settings.problem([str(m.user_id) for m in members])
        method = record.settings.method
        options = Options(look_ahead=ctx.config.look_ahead) if method == "walk" else None
        rough = rough_values.matrix(record, members) if method == "parallel" else None
        search = await asyncio.to_thread(
            start,
            problem,
            method=method,
            options=options,
            earlier=reuse.earlier,
            rough_values=rough,
        )
    except (InvalidProblem, InvalidAnswer) as exc:
        raise InvalidSetup(f"the questions cannot start with these settings: {exc}") from exc
    await ctx.tx.update_round(record.id, at=ctx.now, phase=phase)
    await ctx.tx.add_timer(
        record.id, TimerKind.HOLD_UP, None, "", ctx.now + ctx.config.hold_up_after
    )
    await ctx.audit(
        record.id,
        AuditKind.ASKING_STARTED,
        actor.user_id,
        reused=sorted(int(m) for m in reuse.earlier),
        by_default=list(reuse.by_default),
    )
    current = await ctx.tx.round_by_id(record.id)
    assert current is not None
    names = {m.user_id: m.display_name for m in members}
    facts = replace(
        round_facts(current, members),
        reused=tuple(names[u] for u in (*reuse.chosen, *reuse.by_default)),
        reused_by_default=tuple(names[u] for u in reuse.by_default),
        expected_rounds=expected_rounds(search),
        lapses_at=current.created_at + ctx.config.lapse_after,
    )
    ctx.send(Outgoing(Recipient.group(record.group_id), Kind.ASKING_STARTED, facts))
    await start_search(ctx, current, search)


def _check_headcount(settings: RoundSettings, members: int) -> None:
    """One member per room, or at least two when the method may leave rooms empty."""
    rooms = len(settings.rooms)
    if settings.empty_allowed and settings.fewest_members <= members <= rooms:
        return
    if members == rooms:
        return
    if settings.empty_allowed:
        raise Refusal(
            f"the round has {rooms} rooms and {members} members; with empty rooms allowed, "
            f"questions start with {settings.fewest_members} to {rooms} members",
            RefusalCode.WRONG_PHASE,
        )
    raise Refusal(
        f"the round has {rooms} rooms but {members} members; questions start when every room "
        "has exactly one member. If some rooms may stay empty, the admin can allow that with "
        "/adjust empty rooms yes",
        RefusalCode.WRONG_PHASE,
    )


async def cancel(ctx: Context, group_id: int, actor: Actor) -> None:
    record = await open_round_of(ctx, group_id)
    require_admin(record, actor, "cancel the round")
    phase = transition(record.phase, Step.CANCEL)
    await ctx.tx.update_round(record.id, at=ctx.now, phase=phase)
    await ctx.tx.drop_timers(record.id)
    await ctx.audit(record.id, AuditKind.CANCELLED, actor.user_id)
    ctx.ended.add(record.id)
    await announce(ctx, record.id, Kind.CANCELLED)


async def rerun(ctx: Context, group_id: int, actor: Actor, keep_members: bool) -> None:
    """A new draft with the settled round's settings; members kept or left to join anew."""
    if await ctx.tx.open_round(group_id) is not None:
        raise Refusal(
            "this group already has an open round; finish or cancel it first",
            RefusalCode.BUSY_GROUP,
        )
    previous = await ctx.tx.latest_round(group_id)
    if previous is None:
        raise Refusal("there is no earlier round to re-run; set up a new one", RefusalCode.NO_ROUND)
    if not (actor.user_id == previous.admin_id or actor.is_chat_admin):
        raise NotAllowed("only the admin of the last round or a group admin can re-run it")
    require_may_start(ctx.config.only_admins_start, actor)
    if previous.phase not in RERUN_FROM:
        raise IllegalMove(
            f"only a round everyone agreed to can be re-run; the last one is "
            f"{previous.phase.in_words}. "
            "Set up a new round instead"
        )
    round_id = await ctx.tx.insert_round(
        group_id=group_id,
        admin_id=actor.user_id,
        settings=previous.settings,
        previous_round=previous.id,
        at=ctx.now,
    )
    if keep_members:
        for member in await ctx.tx.members(previous.id):
            await ctx.tx.add_member(round_id, member.user_id, member.display_name, ctx.now)
    await _created(ctx, round_id, actor, previous.settings.to_json())
    if keep_members:
        record = await ctx.tx.round_by_id(round_id)
        assert record is not None
        for member in await ctx.tx.members(round_id):
            await answer_reuse.offer(ctx, record, member.user_id)
