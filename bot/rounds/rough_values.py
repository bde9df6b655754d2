"""Rough values: a member may privately say what each room is roughly worth to them a month.

Optional, and a soft start only. The parallel search uses them to choose its first
questions (a box around them, widened as soon as answers disagree); they are never treated
as answers, never decide anything, and nobody else sees them. Every member who joins a round
that asks in rounds is invited once, privately; they may reply until the questions start.
"""

from __future__ import annotations

from collections.abc import Sequence

from bot.rounds.context import Context
from bot.rounds.errors import InvalidSetup, Refusal
from bot.rounds.events import RoughValues
from bot.rounds.messages import Kind, Outgoing, Recipient, RoughFacts
from bot.rounds.records import AuditKind, MemberRecord, RoundRecord


async def invite(ctx: Context, record: RoundRecord, user_id: int) -> None:
    """The private invitation (only rounds that ask everyone at once use rough values)."""
    if record.settings.method != "parallel":
        return
    s = record.settings
    facts = RoughFacts(record.id, s.rooms, s.currency, s.decimals)
    ctx.send(Outgoing(Recipient.person(user_id), Kind.ROUGH_INVITE, facts))


async def take(ctx: Context, event: RoughValues) -> None:
    """Store (or clear) the member's rough values for the one round they are joining."""
    rounds = await ctx.tx.gathering_rounds_of(event.actor.user_id)
    if not rounds:
        raise Refusal(
            "rough values only help before the questions start, and you are not in a round "
            "that is collecting members; join one first"
        )
    if len(rounds) > 1:
        raise Refusal(
            "you are in more than one round that is collecting members, so I cannot tell "
            "which one these values are for; give them once the other round has started"
        )
    record = rounds[0]
    s = record.settings
    values: tuple[int, ...] | None = None
    if event.amounts is not None:
        if len(event.amounts) != len(s.rooms):
            raise InvalidSetup(
                f"give one amount for each of the {len(s.rooms)} rooms, in this order: "
                f"{', '.join(s.rooms)}; e.g. {', '.join('600' for _ in s.rooms)}"
            )
        values = tuple(a.minor(s.currency, what="rough value") for a in event.amounts)
        if min(values) < 0:
            raise InvalidSetup(
                "rough values cannot be negative; give 0 for a room you would not take"
            )
    await ctx.tx.set_rough_values(record.id, event.actor.user_id, values)
    await ctx.audit(
        record.id, AuditKind.ROUGH_VALUES, event.actor.user_id, given=values is not None
    )
    facts = RoughFacts(record.id, s.rooms, s.currency, s.decimals, values)
    ctx.send(Outgoing(Recipient.person(event.actor.user_id), Kind.ROUGH_NOTED, facts))


def matrix(record: RoundRecord, members: Sequence[MemberRecord]) -> list[list[float]] | None:
    """Rough values per member (members' order) for the search; None when nobody gave any.

    A member who gave none gets an even row (every room worth the same share): no preference,
    so their first questions are steered by nothing but the others' values.
    """
    if all(m.rough_values is None for m in members):
        return None
    rooms = len(record.settings.rooms)
    even = [record.settings.room_rent(len(members)) / rooms] * rooms
    return [list(map(float, m.rough_values)) if m.rough_values else even for m in members]
