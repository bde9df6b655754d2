"""The objector's and the admin's way out of an objection that changed nothing.

See :mod:`bot.rounds.same_split` for when these buttons are offered: *my earlier answer
was right* (the objection is set aside and the split stands) and, once objections are used
up, *end the round* (an admin's choice, the same as ``/cancel``). Changing the earlier answer
instead is :func:`bot.rounds.corrections.change`.
"""

from __future__ import annotations

from bot.rounds import lifecycle
from bot.rounds.context import Context
from bot.rounds.errors import StaleAction
from bot.rounds.events import Actor
from bot.rounds.messages import Kind, Outgoing, Recipient, SplitNoteFacts
from bot.rounds.permissions import require_admin, require_member
from bot.rounds.phases import Phase
from bot.rounds.records import AuditKind, RoundRecord


def _require_current(record: RoundRecord, ref: str) -> None:
    if record.phase is not Phase.PROPOSED or ref != str(record.proposal_no):
        raise StaleAction("that split has been replaced or closed; use the latest message")


async def keep_answer(ctx: Context, record: RoundRecord, actor: Actor, ref: str) -> None:
    """The objector's earlier answer was right: noted; the split in the group stands."""
    require_member(await ctx.tx.members(record.id), actor)
    _require_current(record, ref)
    await ctx.audit(record.id, AuditKind.ANSWER_KEPT, actor.user_id, proposal_no=ref)
    note = SplitNoteFacts(record.id, record.proposal_no)
    ctx.send(Outgoing(Recipient.person(actor.user_id), Kind.ANSWER_KEPT, note))


async def end_round(ctx: Context, record: RoundRecord, actor: Actor, ref: str) -> None:
    """An admin takes the group's last choice to end the round without an agreement."""
    require_admin(record, actor, "end the round")
    _require_current(record, ref)
    await lifecycle.cancel(ctx, record.group_id, actor)
