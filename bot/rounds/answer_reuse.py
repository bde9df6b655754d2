"""Reusing a staying member's answers from the previous round (a re-run after someone moved).

An answer "at these prices I would take room r" describes the person, not the round: if the
rooms are the same (matched by name, in any order) it still holds in the next round unless
their tastes changed. So each member who was in the previous round chooses, privately, to
keep those answers or to answer afresh; whoever has not chosen when the questions start
keeps them (the group is told). The solver reuses kept answers where the prices coincide or
where monotonicity in money decides (:func:`solver.start`, ``earlier=``).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from bot.rounds.buttons import issue_choice
from bot.rounds.context import Context
from bot.rounds.errors import StaleAction
from bot.rounds.events import Actor
from bot.rounds.messages import Action, EarlierFacts, Kind, Outgoing, Recipient
from bot.rounds.permissions import require_member
from bot.rounds.phases import Phase
from bot.rounds.records import AuditKind, MemberRecord, RoundRecord
from bot.rounds.search_steps import stored_search
from bot.rounds.searches import records_of

#: Records that are the member's own statements (not worked out by the search).
OWN_SOURCES = ("asked", "objection", "earlier")
Answers = list[tuple[tuple[int, ...], int]]


@dataclass(frozen=True, slots=True)
class Reuse:
    """What the start of asking does with earlier answers, by user id."""

    earlier: dict[str, Answers]
    chosen: tuple[int, ...]
    by_default: tuple[int, ...]


def room_map(previous: Sequence[str], current: Sequence[str]) -> list[int] | None:
    """For each current room, its index in the previous round; None if the rooms differ."""
    folded = [name.casefold() for name in previous]
    if sorted(folded) != sorted(name.casefold() for name in current):
        return None
    return [folded.index(name.casefold()) for name in current]


async def previous_of(ctx: Context, record: RoundRecord) -> RoundRecord | None:
    """The settled round this one re-runs, if any."""
    if record.previous_round is None:
        return None
    previous = await ctx.tx.round_by_id(record.previous_round)
    if previous is None or previous.phase is not Phase.SETTLED or previous.walk_json is None:
        return None
    return previous


async def offer(ctx: Context, record: RoundRecord, user_id: int) -> None:
    """Ask a member of the previous round, privately, whether to keep their answers."""
    previous = await previous_of(ctx, record)
    if previous is None or user_id not in {m.user_id for m in await ctx.tx.members(previous.id)}:
        return
    usable = room_map(previous.settings.rooms, record.settings.rooms) is not None
    choices = (
        (
            await issue_choice(ctx, record.id, Action.KEEP_EARLIER, str(user_id)),
            await issue_choice(ctx, record.id, Action.ANSWER_AFRESH, str(user_id)),
        )
        if usable
        else ()
    )
    facts = EarlierFacts(record.id, previous.id, usable)
    ctx.send(Outgoing(Recipient.person(user_id), Kind.EARLIER_OFFER, facts, choices))


async def choose(ctx: Context, record: RoundRecord, actor: Actor, ref: str, keep: bool) -> None:
    """Store the member's choice (they may change it until the questions start)."""
    require_member(await ctx.tx.members(record.id), actor)
    if ref != str(actor.user_id):
        raise StaleAction("that button belongs to another member; use the one sent to you")
    if record.phase not in (Phase.DRAFTING, Phase.GATHERING):
        raise StaleAction("the questions have already started, so this choice can no longer change")
    previous = await previous_of(ctx, record)
    if previous is None:
        raise StaleAction("this round has no earlier round to take answers from")
    await ctx.tx.set_earlier_choice(record.id, actor.user_id, keep, ctx.now)
    await ctx.audit(record.id, AuditKind.EARLIER_CHOICE, actor.user_id, keep=keep)
    facts = EarlierFacts(record.id, previous.id, True, keep)
    ctx.send(Outgoing(Recipient.person(actor.user_id), Kind.EARLIER_CHOSEN, facts))


async def plan(ctx: Context, record: RoundRecord, members: Sequence[MemberRecord]) -> Reuse:
    """Whose earlier answers the new walk starts with, translated to this round's rooms."""
    previous = await previous_of(ctx, record)
    mapping = None if previous is None else room_map(previous.settings.rooms, record.settings.rooms)
    if previous is None or mapping is None or previous.walk_json is None:
        return Reuse({}, (), ())
    old_search = await stored_search(ctx.tx, previous)
    if old_search is None:
        return Reuse({}, (), ())
    old_records = records_of(old_search)
    stayed = {m.user_id for m in await ctx.tx.members(previous.id)}
    choices = await ctx.tx.earlier_choices(record.id)
    earlier: dict[str, Answers] = {}
    chosen: list[int] = []
    by_default: list[int] = []
    for member in members:
        if member.user_id not in stayed or not choices.get(member.user_id, True):
            continue
        said = [
            (tuple(r.prices[old] for old in mapping), mapping.index(r.room))
            for r in old_records
            if r.member == str(member.user_id) and r.source in OWN_SOURCES
        ]
        earlier[str(member.user_id)] = list(dict.fromkeys(said))
        (chosen if member.user_id in choices else by_default).append(member.user_id)
    return Reuse(earlier, tuple(chosen), tuple(by_default))
