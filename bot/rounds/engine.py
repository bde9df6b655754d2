"""The round engine: one event in, a list of messages out, one transaction in between.

``handle`` opens a write transaction, returns ``[]`` if the event's key was processed before,
otherwise runs the event's handler and records the key in the same transaction. Refusals roll
everything back and come back as a single :attr:`~bot.rounds.messages.Kind.REFUSAL` message, so bad
input never leaves anything half-stored. Because the store commits before ``handle``
returns, every answer is durable before the adapter acknowledges it.

The messages are also written to the outbox table in that same transaction, so the adapter
can send whatever a crash left unsent (:mod:`bot.adapter.delivery`). Refusals are not stored: they
change nothing and are answered directly.

The engine keeps no state of its own except a cache of searches keyed by their stored revision;
an engine built afresh on the same database continues exactly where the old one stopped.
"""

from __future__ import annotations

from bot.rounds import (
    agreement_records,
    answer_reuse,
    asking,
    corrections,
    deadlines,
    group_moves,
    lifecycle,
    my_answers,
    objections,
    rent_change,
    retention,
    rough_values,
)
from bot.rounds.clock import Clock
from bot.rounds.context import BoundedSearchCache, Context, EngineConfig
from bot.rounds.errors import Refusal, StaleAction
from bot.rounds.events import (
    Actor,
    BeginAsking,
    Cancel,
    ChangeRent,
    Configure,
    Event,
    Join,
    Leave,
    MoveGroup,
    NextRound,
    OpenJoining,
    Press,
    Rerun,
    RoughValues,
    ShowMyAnswers,
    Tick,
)
from bot.rounds.messages import (
    Action,
    AgreementFacts,
    Kind,
    Outgoing,
    Recipient,
    RefusalFacts,
    StatusFacts,
)
from bot.rounds.outbox_codec import encode
from bot.rounds.records import TimerRecord
from bot.rounds.retrying import retry_transient
from bot.rounds.round_settings import RoundSettings
from bot.rounds.searches import AnySearch
from bot.rounds.status import status_of
from bot.rounds.store_port import Store


class Engine:
    """Drives rounds for any number of groups over one :class:`~bot.rounds.store_port.Store`."""

    def __init__(self, store: Store, *, clock: Clock, config: EngineConfig) -> None:
        self._store = store
        self._clock = clock
        self._config = config
        self._searches = BoundedSearchCache()

    async def handle(self, event: Event) -> list[Outgoing]:
        """Apply ``event`` once; the returned messages are already backed by committed state.

        A transaction the database aborted for a passing reason (a dropped PostgreSQL
        connection) is run again from the start; the idempotency key makes that safe.
        """
        return await retry_transient(lambda: self._handle_once(event))

    async def _handle_once(self, event: Event) -> list[Outgoing]:
        now = event.now if isinstance(event, Tick) else self._clock()
        try:
            async with self._store.transaction() as tx:
                if await tx.seen_event(event.key):
                    return []
                ctx = Context(tx, now, self._config, self._searches)
                await _dispatch(ctx, event)
                await _store_outgoing(ctx, event.key)
                await tx.mark_event(event.key, now)
        except Refusal as refusal:
            return [_refusal_message(event, refusal)]
        self._searches.keep(ctx.searches, ctx.ended)
        return ctx.out

    @property
    def cached_rounds(self) -> tuple[int, ...]:
        """Rounds whose search is held in memory, least recently used first (bounded)."""
        return tuple(self._searches)

    async def due_timers(self, now: int) -> list[TimerRecord]:
        """Timers due at ``now`` that have not fired (what the next Tick will handle)."""
        async with self._store.transaction() as tx:
            return await tx.due_timers(now)

    async def status(
        self, *, group_id: int | None = None, round_id: int | None = None
    ) -> StatusFacts | None:
        """The group's latest round (or round ``round_id``) with its progress; None if none."""
        async with self._store.transaction() as tx:
            ctx = Context(tx, self._clock(), self._config, self._searches)
            if round_id is not None:
                record = await tx.round_by_id(round_id)
            elif group_id is not None:
                record = await tx.latest_round(group_id)
            else:
                raise ValueError("status() needs group_id or round_id")
            result = None if record is None else await status_of(ctx, record)
        self._searches.keep(ctx.searches, set())
        return result

    async def history(self, group_id: int) -> list[AgreementFacts]:
        """The group's written agreements, oldest first, from a read transaction."""

        async def read() -> list[AgreementFacts]:
            async with self._store.read_transaction() as tx:
                return await agreement_records.history(tx, group_id)

        return await retry_transient(read)

    async def forget(self, now: int) -> list[int]:
        """Apply the retention policy (:mod:`bot.rounds.retention`); the rounds forgotten."""

        async def once() -> list[int]:
            async with self._store.transaction() as tx:
                return await retention.forget(tx, now, self._config)

        forgotten = await retry_transient(once)
        for round_id in forgotten:
            self._searches.pop(round_id, None)
        return forgotten

    async def search_of(self, round_id: int) -> tuple[AnySearch, RoundSettings] | None:
        """The round's search and settings (read only; from the cache when current), or None.

        For pictures of how the prices moved: the adapter asks the engine rather than parsing
        stored searches itself.
        """
        async with self._store.transaction() as tx:
            record = await tx.round_by_id(round_id)
            if record is None or record.walk_json is None:
                return None
            ctx = Context(tx, self._clock(), self._config, self._searches)
            search = await ctx.search(record)
        self._searches.keep(ctx.searches, set())
        return search, record.settings

    async def pending_timers(self) -> list[TimerRecord]:
        """Every timer still to fire; the adapter rebuilds its job queue from this at start-up."""
        async with self._store.transaction() as tx:
            return await tx.pending_timers()


async def _dispatch(ctx: Context, event: Event) -> None:
    if isinstance(event, Configure):
        await lifecycle.configure(ctx, event)
    elif isinstance(event, OpenJoining):
        await lifecycle.open_joining(ctx, event.group_id, event.actor)
    elif isinstance(event, Join):
        await lifecycle.join(ctx, await lifecycle.open_round_of(ctx, event.group_id), event.actor)
    elif isinstance(event, Leave):
        await lifecycle.leave(ctx, event.group_id, event.actor)
    elif isinstance(event, BeginAsking):
        await lifecycle.begin_asking(ctx, event.group_id, event.actor)
    elif isinstance(event, Cancel):
        await lifecycle.cancel(ctx, event.group_id, event.actor)
    elif isinstance(event, RoughValues):
        await rough_values.take(ctx, event)
    elif isinstance(event, NextRound):
        await asking.next_round(
            ctx, await lifecycle.open_round_of(ctx, event.group_id), event.actor
        )
    elif isinstance(event, Rerun):
        await lifecycle.rerun(ctx, event.group_id, event.actor, event.keep_members)
    elif isinstance(event, Press):
        await _press(ctx, event)
    elif isinstance(event, ShowMyAnswers):
        await my_answers.show(ctx, event.group_id, event.actor)
    elif isinstance(event, MoveGroup):
        await group_moves.move_group(ctx, event)
    elif isinstance(event, ChangeRent):
        await rent_change.change_rent(ctx, event)
    else:
        await deadlines.fire_due(ctx)


async def _store_outgoing(ctx: Context, event_key: str) -> None:
    """Every message of this event into the outbox, in order, before the commit."""
    for seq, message in enumerate(ctx.out):
        await ctx.tx.add_outgoing(
            event_key=event_key,
            seq=seq,
            chat_id=message.to.chat_id,
            round_id=getattr(message.facts, "round_id", None),
            kind=message.kind.value,
            ref=message.ref,
            payload=encode(message),
            at=ctx.now,
        )


async def _press(ctx: Context, event: Press) -> None:
    """Look the token up and do what it stands for, as the presser."""
    token = await ctx.tx.token(event.token)
    record = None if token is None else await ctx.tx.round_by_id(token.round_id)
    if token is None or record is None:
        raise StaleAction("this button is not valid any more; use the latest message")
    if token.action is Action.JOIN:
        await lifecycle.join(ctx, record, event.actor)
    elif token.action is Action.ANSWER:
        assert token.room is not None
        await asking.answer(ctx, record, event.actor, token.ref, token.room)
    elif token.action is Action.ACCEPT:
        await asking.accept(ctx, record, event.actor, token.ref)
    elif token.action is Action.OBJECT:
        await asking.begin_objection(ctx, record, event.actor, token.ref)
    elif token.action is Action.CHANGE_ANSWER:
        await corrections.offer(ctx, record, event.actor, token.ref)
    elif token.action is Action.CHANGE_TO:
        assert token.room is not None
        await corrections.change(ctx, record, event.actor, token.ref, token.room)
    elif token.action is Action.KEEP_ANSWER:
        await objections.keep_answer(ctx, record, event.actor, token.ref)
    elif token.action is Action.END_ROUND:
        await objections.end_round(ctx, record, event.actor, token.ref)
    elif token.action in (Action.KEEP_EARLIER, Action.ANSWER_AFRESH):
        keep = token.action is Action.KEEP_EARLIER
        await answer_reuse.choose(ctx, record, event.actor, token.ref, keep)
    elif token.action is Action.PREFER and await rent_change.still_repriced(ctx, record):
        assert token.room is not None
        await rent_change.object_with_room(ctx, record, event.actor, token.ref, token.room)
    else:
        assert token.room is not None
        await asking.object_with_room(ctx, record, event.actor, token.ref, token.room)


def _refusal_message(event: Event, refusal: Refusal) -> Outgoing:
    """Group commands are answered in the group; presses and the rest privately."""
    facts = RefusalFacts(refusal.code.value, str(refusal))
    group_id = getattr(event, "group_id", None)
    actor = getattr(event, "actor", None)
    if isinstance(event, Press | ShowMyAnswers) or group_id is None:
        user_id = actor.user_id if isinstance(actor, Actor) else 0
        return Outgoing(Recipient.person(user_id), Kind.REFUSAL, facts)
    return Outgoing(Recipient.group(int(group_id)), Kind.REFUSAL, facts)
