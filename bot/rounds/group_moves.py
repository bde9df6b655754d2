"""A group upgraded to a supergroup: its rounds, and only its own messages, follow it.

Telegram gives the group a new chat id; the old id answers every call with
``migrate_to_chat_id``. The move is keyed by the *group's* old id and does nothing unless some
round was held in that chat: a private chat (a person's id) never has rounds, so a move named
after one can never carry a person's private messages into a group.

Messages already shown in the old chat stay there. What the group still needs is posted once
more in the new chat, marked :data:`REPOST`: an open proposal (with fresh buttons, so members
can still agree) and the progress message, so later edits land where people now look.
"""

from __future__ import annotations

from bot.rounds.buttons import issue_choice
from bot.rounds.context import Context
from bot.rounds.events import MoveGroup
from bot.rounds.message_facts import division_facts, round_facts
from bot.rounds.messages import Action, Kind, Outgoing, Recipient
from bot.rounds.phases import Phase

#: ``ref`` of a message re-posted in the new chat after an upgrade.
REPOST = "repost-after-upgrade"
#: Phases in which the group has a progress message worth following the group.
_WITH_BOARD = (Phase.ASKING, Phase.PROPOSED)


async def move_group(ctx: Context, event: MoveGroup) -> None:
    """Move the group's rounds and unsent group messages; nothing if no round was held there."""
    old, new = event.old_group_id, event.new_group_id
    latest = await ctx.tx.latest_round(old)
    if latest is None or old == new:
        return  # not a chat we ever held a round in (e.g. a private chat): nothing to move
    await ctx.tx.move_group(old, new)
    record = await ctx.tx.round_by_id(latest.id)
    assert record is not None
    if record.phase not in _WITH_BOARD:
        return
    members = await ctx.tx.members(record.id)
    proposal = (await ctx.search(record)).proposal()
    if record.phase is Phase.PROPOSED and proposal is not None:
        number = str(record.proposal_no)
        choices = (
            await issue_choice(ctx, record.id, Action.ACCEPT, number),
            await issue_choice(ctx, record.id, Action.OBJECT, number),
        )
        facts = division_facts(record, members, proposal, record.proposal_no)
        ctx.send(Outgoing(Recipient.group(new), Kind.PROPOSAL, facts, choices, ref=REPOST))
    board = round_facts(record, members)
    ctx.send(Outgoing(Recipient.group(new), Kind.ASKING_STARTED, board, ref=REPOST))
