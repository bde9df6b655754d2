"""The group's live status: one message per round, rewritten from opening to the end.

A group chat should not fill up with a bot's bookkeeping. The round's opening message (with
its join button) is the one place the group looks for where things stand: joins and leaves
rewrite it, the start of the questions turns it into "everyone is in" with what to expect
(how the questions go, the expected number of rounds, the assumptions, the date the round
lapses), and from then on it shows the progress and whom the round is waiting for, through
the proposal to the end (:func:`bot.adapter.texts.board`). Progress rewrites are coalesced
(:mod:`bot.adapter.board_edits`), and every edit counts against the group's minute
(:mod:`bot.adapter.group_pace`).

Each method returns the id of the message that now shows the outgoing message, or None when
there is nothing to rewrite (an older round, a deleted message): the caller then posts anew.
"""

from __future__ import annotations

import asyncio
import logging
from collections.abc import Awaitable, Callable
from contextlib import AbstractAsyncContextManager
from dataclasses import dataclass, replace

from telegram import Bot
from telegram.error import BadRequest, ChatMigrated

from bot.adapter.keyboards import keyboard, rooms_of
from bot.adapter.message_edits import edit_text
from bot.adapter.texts import board, fit, render
from bot.rounds.engine import Engine
from bot.rounds.messages import Kind, Outgoing, RoundFacts
from bot.rounds.outbox_codec import decode
from bot.rounds.store_port import Transaction

log = logging.getLogger(__name__)


@dataclass
class LiveStatus:
    """Rewrites each round's status message; one per running bot (owned by the delivery)."""

    bot: Bot
    engine: Engine
    locale: str
    transaction: Callable[[], AbstractAsyncContextManager[Transaction]]
    #: delivery's turns at the store (reads of the round's status wait for one)
    turn: asyncio.Semaphore
    need_private_chat: Callable[[Outgoing], Awaitable[tuple[str, ...]]]
    group_link: Callable[[Outgoing], str]
    migrate: Callable[[int, int], Awaitable[None]]

    async def _opening(self, chat_id: int, round_id: int) -> tuple[int, Outgoing] | None:
        """The round's opening message as sent (its id and what it carried), if any."""
        async with self.transaction() as tx:
            opened = await tx.last_sent(chat_id, [Kind.JOINING_OPEN.value], round_id=round_id)
        if opened is None or opened.message_id is None:
            return None
        return opened.message_id, decode(opened.payload)

    async def joined_or_left(self, message: Outgoing) -> int | None:
        """Someone joined or left: rewrite the opening message, same join button."""
        facts = message.facts
        if not isinstance(facts, RoundFacts):
            return None
        found = await self._opening(message.to.chat_id, facts.round_id)
        if found is None:
            return None
        message_id, opened = found
        live = replace(message, kind=Kind.JOINING_OPEN, choices=opened.choices)
        need = await self.need_private_chat(live)
        text = fit(render(live, self.locale, need_private_chat=need))
        markup = keyboard(live, rooms_of(live), self.group_link(live))
        return await edit_text(self.bot, message.to.chat_id, message_id, text, markup)

    async def asking_started(self, message: Outgoing) -> int | None:
        """The questions start: the opening message becomes "everyone is in" with what to
        expect; the join button goes (a private-chat link stays while someone needs it)."""
        facts = message.facts
        if not isinstance(facts, RoundFacts):
            return None
        found = await self._opening(message.to.chat_id, facts.round_id)
        if found is None:
            return None
        need = await self.need_private_chat(message)
        text = fit(render(message, self.locale, need_private_chat=need))
        markup = keyboard(message, (), self.group_link(message) if need else None)
        try:
            return await edit_text(self.bot, message.to.chat_id, found[0], text, markup)
        except BadRequest as bad:  # e.g. no longer editable: say it in a message of its own
            log.info("status message not rewritten, posting anew: %s", bad)
            return None

    async def rewrite(self, round_id: int) -> None:
        """Show today's progress on the status message (called coalesced, see board_edits)."""
        async with self.turn:
            status = await self.engine.status(round_id=round_id)
        if status is None:
            return
        group = status.round.group_id
        async with self.transaction() as tx:
            posted = await tx.last_sent(group, [Kind.ASKING_STARTED.value], round_id=round_id)
        if posted is None or posted.message_id is None:
            return
        started = decode(posted.payload).facts
        text = board(status, self.locale, started if isinstance(started, RoundFacts) else None)
        try:
            await edit_text(self.bot, group, posted.message_id, text, None)
        except BadRequest as bad:
            log.info("progress line not updated: %s", bad)
        except ChatMigrated as moved:  # the *group* moved; its re-posted line comes next
            await self.migrate(group, moved.new_chat_id)

    async def repost(self, message: Outgoing) -> int | None:
        """The status message, once more, in the chat the group moved to."""
        facts = message.facts
        assert isinstance(facts, RoundFacts)
        async with self.turn:
            status = await self.engine.status(round_id=facts.round_id)
        text = render(message, self.locale) if status is None else board(status, self.locale, facts)
        sent = await self.bot.send_message(message.to.chat_id, fit(text))
        return sent.message_id
