"""A member's own answers, privately, with a way to change any that still counts.

The list comes from the round's audit log (answers, answers worked out from them, objections
and changes, in order), so it also shows answers that no longer count: changed ones and ones
set aside because a change replaced their question. Each answer the search still uses, while
the round is open, gets a "change answer n" button (the latest few, to keep the message
short); :mod:`bot.rounds.corrections` does the rest.
"""

from __future__ import annotations

import json

from bot.rounds.buttons import issue_choice
from bot.rounds.context import Context
from bot.rounds.corrections import CHANGEABLE, LISTED
from bot.rounds.errors import NotAllowed
from bot.rounds.events import Actor
from bot.rounds.messages import (
    Action,
    AnswerLine,
    Choice,
    Kind,
    MyAnswersFacts,
    Outgoing,
    Recipient,
)
from bot.rounds.permissions import require_member
from bot.rounds.records import OWN_ANSWER_KINDS, AuditKind, RoundRecord
from bot.rounds.rent_change import still_repriced

#: How a line reads when its answer no longer counts.
NO_LONGER_COUNTS = "set-aside"


async def show(ctx: Context, group_id: int, actor: Actor) -> None:
    """Only the member's own answers, only to that member, from the group's latest round.

    A round that only re-priced an agreement for a new rent (:mod:`bot.rounds.rent_change`)
    asked nobody anything: its split rests on the answers of the agreed round before it, so
    those are listed instead (saying so), while the member has none in the new round.
    """
    record = await ctx.tx.latest_round(group_id)
    if record is None:
        raise NotAllowed("this group has no round yet, so you have no answers to see")
    require_member(await ctx.tx.members(record.id), actor)
    _require_kept(ctx, record)
    lines, changeable = await _answers(ctx, record, actor)
    shown, before_rent_change = record, False
    if not lines and record.previous_round is not None and await still_repriced(ctx, record):
        earlier = await ctx.tx.round_by_id(record.previous_round)
        if earlier is not None and actor.user_id in {
            m.user_id for m in await ctx.tx.members(earlier.id)
        }:
            _require_kept(ctx, earlier)
            lines, changeable = await _answers(ctx, earlier, actor)
            shown, before_rent_change = earlier, True
    buttons: list[Choice] = [
        await issue_choice(ctx, shown.id, Action.CHANGE_ANSWER, qid, number)
        for number, qid in changeable[-LISTED:]
    ]
    s = shown.settings
    facts = MyAnswersFacts(
        shown.id, s.currency, s.decimals, s.rooms, tuple(lines), before_rent_change
    )
    ctx.send(Outgoing(Recipient.person(actor.user_id), Kind.MY_ANSWERS, facts, tuple(buttons)))


def _require_kept(ctx: Context, record: RoundRecord) -> None:
    if record.forgotten_at is not None:
        raise NotAllowed(
            "your answers in this group's last round were deleted: answers are kept for "
            f"{ctx.config.keep_answers_days} days after a round ends. Its agreement is kept; "
            "see /agreements"
        )


async def _answers(
    ctx: Context, record: RoundRecord, actor: Actor
) -> tuple[list[AnswerLine], list[tuple[int, str]]]:
    """The member's answer lines in ``record`` and the (line number, question) pairs that
    may still be changed."""
    live = {
        q.qid
        for q in await ctx.tx.questions(record.id)
        if q.user_id == actor.user_id and q.answered_at is not None and q.withdrawn_at is None
    }
    lines: list[AnswerLine] = []
    changeable: list[tuple[int, str]] = []
    for entry in await ctx.tx.audit_of(record.id, actor.user_id):
        if entry.kind not in OWN_ANSWER_KINDS:
            continue
        detail = json.loads(entry.detail)
        room = record.settings.rooms[int(detail["room"])]
        how = str(detail.get("how", entry.kind))
        qid = detail.get("now") if entry.kind == AuditKind.ANSWER_CHANGED else detail.get("qid")
        if entry.kind == AuditKind.ANSWER and qid not in live:
            how = NO_LONGER_COUNTS
        elif qid in live and record.phase in CHANGEABLE:
            changeable.append((len(lines), str(qid)))
        prices = tuple(int(p) for p in detail["prices"])
        lines.append(AnswerLine(entry.at, prices, room, how))
    return lines, changeable
