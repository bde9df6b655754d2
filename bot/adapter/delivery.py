"""Sending the outbox: every message the engine committed reaches Telegram once, in order.

The engine writes its messages into the outbox inside the event's transaction; this module
sends the pending ones and marks each as sent (with its Telegram message id) right after the
send returns. What Telegram makes of a failure decides what happens next:

* flood control (``RetryAfter``) is retried by PTB's ``AIORateLimiter``; if it persists, and
  on network errors, the message stays pending and that chat's sending pauses; a retry soon
  after (and a periodic timer) sends it;
* ``Forbidden`` for a private chat means the person never opened a chat with the bot (or
  blocked it): the message is *held* and the group is told, with a deep link; ``/start``
  releases the person's held messages;
* ``ChatMigrated`` from a group (a send, an edit of its progress message or proposal) moves
  that group's rounds to the supergroup id and sends again; it is always attributed to the
  group, never to the private chat whose message was being delivered;
* "message is not modified" is a success.

Each chat has its own sender (:mod:`bot.adapter.chat_senders`): its messages go out in order,
chats side by side, so a group that must wait (flood control, :mod:`bot.adapter.group_pace`)
holds up no one else.

A quiet group chat: a plain round posts only its status message (rewritten from opening to
the end, :mod:`bot.adapter.live_status`; progress at most every few seconds,
:mod:`bot.adapter.board_edits`), the picture and the suggested split (rewritten as people
agree), and the written agreement, whose first file carries the outcome.

The picture of the walk (:mod:`bot.adapter.walk_picture`) goes out just before the proposal,
so nobody can agree before it is there; it is an extra and its failure never holds up the
proposal.

A send that reached Telegram but whose answer was lost (a timeout) is sent again later: a
rare duplicate is preferred to a lost question.
"""

from __future__ import annotations

import asyncio
import logging
from collections.abc import AsyncIterator, Callable, Iterable
from contextlib import asynccontextmanager
from dataclasses import dataclass, replace

from telegram import Bot
from telegram.error import BadRequest, ChatMigrated, Forbidden, NetworkError, RetryAfter

from bot.adapter.board_edits import BOARD_EDIT_EVERY, CoalescedEdits
from bot.adapter.chat_senders import ChatSenders
from bot.adapter.documents import send_agreement
from bot.adapter.keyboards import deep_link, join_payload, keyboard, rooms_of
from bot.adapter.live_status import LiveStatus
from bot.adapter.message_edits import NOT_MODIFIED, edit_text
from bot.adapter.private_texts import answered_question, withdrawn_question
from bot.adapter.texts import fit, needs_private_chat, pick_locale, render
from bot.adapter.walk_picture import send_walk_picture
from bot.rounds.clock import Clock
from bot.rounds.engine import Engine
from bot.rounds.events import MoveGroup
from bot.rounds.group_moves import REPOST
from bot.rounds.messages import (
    AgreementFacts,
    DivisionFacts,
    Kind,
    Outgoing,
    ProgressFacts,
    QuestionFacts,
    RoundFacts,
)
from bot.rounds.outbox_codec import decode
from bot.rounds.records import OutboxRecord, OutboxState
from bot.rounds.store_port import Store, Transaction

log = logging.getLogger(__name__)

#: A message claimed for sending this long ago was lost with its process: send it again.
STALE_CLAIM_SECONDS = 120
#: Delivery transactions waiting for the store at once (events get the turns in between).
DELIVERY_TRANSACTIONS_AT_ONCE = 2
#: At shutdown, how long the senders may go on to finish what they are sending.
SHUTDOWN_GRACE_SECONDS = 5.0
#: The group messages people vote with: a split, or the note that it came back.
VOTED_ON = [k.value for k in (Kind.PROPOSAL, Kind.SAME_SPLIT, Kind.LAST_CHOICE)]


class SendLater(Exception):
    """Telegram or the network is not taking messages now; keep the rest pending."""


@dataclass
class Delivery:
    """Owns the outbox flush; one per running bot."""

    bot: Bot
    store: Store
    engine: Engine
    clock: Clock
    locale: str
    bot_username: str
    #: seconds between two edits of one group's progress message
    board_edit_every: float = BOARD_EDIT_EVERY
    #: called when a chat's sending had to pause (the runtime schedules a retry)
    on_paused: Callable[[], None] | None = None

    def __post_init__(self) -> None:
        self._lock = asyncio.Lock()
        self._noticed: set[tuple[int, int]] = set()
        self._senders = ChatSenders(self._send_chat)
        self._moved: dict[int, int] = {}
        self._turn = asyncio.Semaphore(DELIVERY_TRANSACTIONS_AT_ONCE)
        self._status = LiveStatus(
            self.bot,
            self.engine,
            self.locale,
            self._transaction,
            self._turn,
            self._need_private_chat,
            self._group_link,
            self._migrate,
        )
        self._boards = CoalescedEdits(self._status.rewrite, self.board_edit_every)
        #: proposals (chat, round, number) whose picture went out (not again on a retry)
        self._pictured: set[tuple[int, int, int]] = set()

    @asynccontextmanager
    async def _transaction(self) -> AsyncIterator[Transaction]:
        """A store transaction for delivery's bookkeeping. Only a few of them wait for the
        store at once, so an event (a press to answer) never queues behind a crowd of them."""
        async with self._turn, self.store.transaction() as tx:
            yield tx

    async def send_soon(self, chat_ids: Iterable[int] | None = None) -> None:
        """Start a sender for these chats (default: every chat with pending messages); does
        not wait for the sends."""
        if chat_ids is None:
            async with self._transaction() as tx:
                rows = await tx.outgoing(OutboxState.PENDING)
            chat_ids = dict.fromkeys(row.chat_id for row in rows)
        self._senders.start(chat_ids)

    async def flush(self) -> bool:
        """Send everything pending and wait for it; False if something must wait for later."""
        await self.send_soon()
        return await self._senders.wait()

    async def close(self) -> None:
        """At shutdown: finish what is being sent (a few seconds at most), then stop; whatever
        is still unsent stays in the outbox for the next start."""
        try:
            await asyncio.wait_for(self._senders.wait(), SHUTDOWN_GRACE_SECONDS)
            await asyncio.wait_for(self._boards.close(finish=True), SHUTDOWN_GRACE_SECONDS)
        except TimeoutError:
            log.warning("stopping with messages still unsent; they go out at the next start")
        await self._boards.close()
        await self._senders.close()

    async def _send_chat(self, chat_id: int) -> bool:
        """One chat's pending messages, oldest first; False if sending must pause."""
        async with self._transaction() as tx:
            rows = await tx.outgoing(OutboxState.PENDING, chat_id=chat_id)
        for row in rows:
            if chat_id in self._moved:  # the group moved: its new chat's sender takes over
                return True
            now = self.clock()
            async with self._transaction() as tx:
                claimed = await tx.claim_outgoing(row.id, now, now - STALE_CLAIM_SECONDS)
            if not claimed:  # another sender or bot process is sending it
                continue
            try:
                await self._deliver(row)
            except SendLater as reason:
                async with self._transaction() as tx:
                    await tx.release_claim(row.id)
                log.warning("sending paused, will retry: %s", reason)
                if self.on_paused is not None:
                    self.on_paused()
                return False
        return True

    async def release(self, user_id: int) -> int:
        """The person opened a private chat: their held messages become pending again."""
        async with self._lock:
            async with self._transaction() as tx:
                held = await tx.outgoing(OutboxState.HELD, chat_id=user_id)
                for row in held:
                    await tx.set_outgoing_state(row.id, OutboxState.PENDING, self.clock())
            self._noticed = {n for n in self._noticed if n[0] != user_id}
            return len(held)

    # --- one message --------------------------------------------------------------------------

    async def _deliver(self, row: OutboxRecord) -> None:
        message = decode(row.payload)
        message = replace(message, to=replace(message.to, chat_id=row.chat_id))
        await self._picture_first(message)
        try:
            sent_id = await self._send(row, message)
        except ChatMigrated as moved:
            if message.to.private:  # a private chat never migrates: never move anything for it
                log.error("outbox message %s: private chat answered 'migrated'", row.id)
                await self._set_state(row, OutboxState.DROPPED, None)
                return
            await self._migrate(row.chat_id, moved.new_chat_id)
            message = replace(message, to=replace(message.to, chat_id=moved.new_chat_id))
            sent_id = await self._send(row, message)
        except Forbidden as refused:
            await self._forbidden(row, message, str(refused))
            return
        except RetryAfter as flood:
            raise SendLater(f"flood control: {flood}") from flood
        except BadRequest as bad:
            if NOT_MODIFIED not in str(bad):
                log.error("Telegram refused outbox message %s for good: %s", row.id, bad)
                await self._set_state(row, OutboxState.DROPPED, None)
                return
            sent_id = None
        except NetworkError as trouble:
            raise SendLater(f"network: {trouble}") from trouble
        await self._set_state(row, OutboxState.SENT, sent_id)
        if message.kind is Kind.PROPOSAL and isinstance(message.facts, DivisionFacts):
            facts = message.facts  # sent: never retried, so its picture need not be remembered
            self._pictured.discard((message.to.chat_id, facts.round_id, facts.proposal_no))
            await self.refresh_board(facts.round_id)  # now waiting for agreement

    async def _picture_first(self, message: Outgoing) -> None:
        """A new proposal to a group: its picture goes out just before it (once; it never
        raises, and a failure leaves the proposal to go out alone)."""
        facts = message.facts
        if (
            message.kind is not Kind.PROPOSAL
            or not isinstance(facts, DivisionFacts)
            or message.to.private
            or message.ref == REPOST  # the picture was shown with the first post
        ):
            return
        key = (message.to.chat_id, facts.round_id, facts.proposal_no)
        if key not in self._pictured:
            self._pictured.add(key)
            await send_walk_picture(self.bot, self.engine, message.to.chat_id, facts.round_id)

    async def _set_state(self, row: OutboxRecord, state: str, message_id: int | None) -> None:
        async with self._transaction() as tx:
            await tx.set_outgoing_state(row.id, state, self.clock(), message_id)

    async def _send(self, row: OutboxRecord, message: Outgoing) -> int | None:
        """Send or edit; returns the message id that now shows this outgoing message."""
        if message.kind is Kind.WITHDRAWN and isinstance(message.facts, ProgressFacts):
            return await self._withdraw_question(message, message.facts)
        if isinstance(message.facts, ProgressFacts) and message.facts.question_ref:
            return await self._acknowledge_answer(message, message.facts)
        if message.kind in (Kind.ACCEPTED, Kind.SETTLED):
            # Both only rewrite the proposal; the outcome comes with the written agreement.
            await self._update_proposal(message)
            return None
        if message.kind is Kind.AGREEMENT:
            outcome = await self._outcome(message)
            return await send_agreement(self.bot, message, self.locale, outcome)
        if message.kind is Kind.ASKING_STARTED and message.ref == REPOST:
            return await self._status.repost(message)
        edited: int | None = None
        if message.kind in (Kind.MEMBER_JOINED, Kind.MEMBER_LEFT):
            edited = await self._status.joined_or_left(message)
        elif message.kind is Kind.ASKING_STARTED:
            edited = await self._status.asking_started(message)
        if edited is not None:
            return edited
        locale = await self._locale_for(message)
        need = await self._need_private_chat(message)
        link = self._group_link(message) if need or message.kind is Kind.JOINING_OPEN else None
        text = fit(render(message, locale, need_private_chat=need))
        markup = keyboard(message, rooms_of(message), link)
        sent = await self.bot.send_message(message.to.chat_id, text, reply_markup=markup)
        return sent.message_id

    async def _withdraw_question(self, message: Outgoing, facts: ProgressFacts) -> int | None:
        """Edit a no-longer-needed question in place (buttons gone); never a new message."""
        chat_id = message.to.chat_id
        async with self._transaction() as tx:
            asked = await tx.last_sent(
                chat_id, [Kind.QUESTION.value, Kind.REMINDER.value], ref=facts.question_ref
            )
        if asked is None or asked.message_id is None:
            return None
        question = decode(asked.payload).facts
        assert isinstance(question, QuestionFacts)
        text = withdrawn_question(question, await self._locale_for(message))
        return await edit_text(self.bot, chat_id, asked.message_id, text, None)

    async def _acknowledge_answer(self, message: Outgoing, facts: ProgressFacts) -> int | None:
        """Edit the answered question in place (its room buttons replaced by "I meant another
        room"), then refresh the group board."""
        chat_id = message.to.chat_id
        async with self._transaction() as tx:
            asked = await tx.last_sent(
                chat_id, [Kind.QUESTION.value, Kind.REMINDER.value], ref=facts.question_ref
            )
        locale = await self._locale_for(message)
        edited: int | None = None
        if asked is not None and asked.message_id is not None:
            question = decode(asked.payload).facts
            assert isinstance(question, QuestionFacts)
            text = answered_question(question, facts.room_taken or "?", locale)
            edited = await edit_text(
                self.bot, chat_id, asked.message_id, text, keyboard(message, ())
            )
        if edited is None:  # the question's message is gone: say it anew, with its button
            text, markup = render(message, locale), keyboard(message, ())
            edited = (await self.bot.send_message(chat_id, text, reply_markup=markup)).message_id
        await self.refresh_board(facts.round_id)
        return edited

    async def _outcome(self, message: Outgoing) -> str | None:
        """The outcome as the group reads it ("Everyone agreed. The split: ..."), worded from
        the settled split sent just before the agreement; None if there is none."""
        facts = message.facts
        assert isinstance(facts, AgreementFacts)
        async with self._transaction() as tx:
            settled = await tx.last_sent(
                message.to.chat_id, [Kind.SETTLED.value], round_id=facts.round_id
            )
        return None if settled is None else render(decode(settled.payload), self.locale)

    async def refresh_board(self, round_id: int) -> None:
        """Ask for the group's progress message to show today's progress (coalesced)."""
        self._boards.request(round_id)

    async def _update_proposal(self, message: Outgoing) -> None:
        """Show the acceptance count on the split (or the "same split" note); buttons go once
        settled."""
        facts = message.facts
        assert isinstance(facts, DivisionFacts)
        async with self._transaction() as tx:
            posted = await tx.last_sent(message.to.chat_id, VOTED_ON, round_id=facts.round_id)
        if posted is None or posted.message_id is None:
            return
        proposal = decode(posted.payload)
        kind = Kind.ACCEPTED if message.kind is Kind.ACCEPTED else Kind.PROPOSAL
        text = render(replace(message, kind=kind), self.locale)
        markup = keyboard(proposal, ()) if message.kind is Kind.ACCEPTED else None
        try:
            await edit_text(self.bot, message.to.chat_id, posted.message_id, text, markup)
        except BadRequest as bad:
            log.info("proposal not updated: %s", bad)
        except ChatMigrated as moved:
            await self._migrate(message.to.chat_id, moved.new_chat_id)
        await self.refresh_board(facts.round_id)

    # --- failures ----------------------------------------------------------------------------

    async def _migrate(self, old_group: int, new_group: int) -> None:
        """The group became a supergroup: move its rounds and unsent messages to the new id.

        ``old_group`` is always the chat that answered "migrated" (a group); the engine
        moves nothing unless a round was held there.
        """
        self._moved[old_group] = new_group
        await self.engine.handle(
            MoveGroup(f"migrate:{old_group}:{new_group}", old_group, new_group)
        )
        await self.send_soon()

    async def _forbidden(self, row: OutboxRecord, message: Outgoing, reason: str) -> None:
        if not message.to.private:
            log.error("cannot post in group %s any more: %s", row.chat_id, reason)
            await self._set_state(row, OutboxState.DROPPED, None)
            return
        await self._set_state(row, OutboxState.HELD, None)
        if row.round_id is None or (row.chat_id, row.round_id) in self._noticed:
            return
        self._noticed.add((row.chat_id, row.round_id))
        status = await self.engine.status(round_id=row.round_id)
        if status is None:
            return
        names = dict(zip(status.round.member_ids, status.round.members, strict=False))
        group = status.round.group_id
        link = deep_link(self.bot_username, join_payload(group))
        text = needs_private_chat(names.get(row.chat_id, "Someone"), link)
        try:
            await self.bot.send_message(group, text)
        except ChatMigrated as moved:
            await self._migrate(group, moved.new_chat_id)
        except (BadRequest, Forbidden, NetworkError) as trouble:
            log.warning("could not post the private-chat notice: %s", trouble)

    # --- helpers -----------------------------------------------------------------------------

    async def _locale_for(self, message: Outgoing) -> str:
        if not message.to.private:
            return self.locale
        async with self._transaction() as tx:
            known = await tx.contacts([message.to.chat_id])
        return pick_locale(known.get(message.to.chat_id), self.locale)

    async def _need_private_chat(self, message: Outgoing) -> tuple[str, ...]:
        """Members named in a group message who have not opened a private chat yet."""
        facts = message.facts
        if message.to.private or not isinstance(facts, RoundFacts) or not facts.member_ids:
            return ()
        async with self._transaction() as tx:
            known = await tx.contacts(list(facts.member_ids))
        return tuple(
            name
            for user_id, name in zip(facts.member_ids, facts.members, strict=False)
            if user_id not in known
        )

    def _group_link(self, message: Outgoing) -> str:
        return deep_link(self.bot_username, join_payload(message.to.chat_id))
