"""What the running bot holds between updates: the store, the engine, delivery and timers.

Built in the application's ``post_init`` (after PTB has learnt the bot's username) and kept
in ``application.bot_data``; handlers reach it through :func:`runtime_of`.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass, field
from datetime import timedelta
from typing import Any

from telegram.ext import Application, CallbackContext, ContextTypes, Job, JobQueue

from bot.adapter.delivery import Delivery
from bot.adapter.process_settings import Settings
from bot.rounds.clock import Clock
from bot.rounds.engine import Engine
from bot.rounds.events import Event, Tick
from bot.rounds.messages import Outgoing
from bot.rounds.store_port import Store

log = logging.getLogger(__name__)
RUNTIME_KEY = "flatpact"
AnyApp = Application[Any, Any, Any, Any, Any, Any]
AnyContext = CallbackContext[Any, Any, Any, Any]


@dataclass
class Runtime:
    """The bot's working parts; ``handle`` is the one way an event enters the engine."""

    settings: Settings
    store: Store
    engine: Engine
    delivery: Delivery
    clock: Clock
    job_queue: JobQueue[Any] | None
    scheduled: set[int] = field(default_factory=set)

    async def handle(self, event: Event) -> list[Outgoing]:
        """Engine (commits state and outbox together), then timers; sending starts, unawaited."""
        out = await self.record(event)
        await self.after_event(out)
        return out

    async def record(self, event: Event) -> list[Outgoing]:
        """Only the engine's one short transaction, nothing sent yet: a button press is
        answered right after this, then :meth:`after_event` starts its messages."""
        return await self.engine.handle(event)

    async def after_event(self, out: list[Outgoing]) -> None:
        """Schedule new timers and start sending the event's messages (never waits for them)."""
        await self.schedule_timers()
        await self.delivery.send_soon({m.to.chat_id: None for m in out})

    async def schedule_timers(self) -> None:
        """A job per stored timer not yet scheduled; rebuilt from the database at start-up."""
        if self.job_queue is None:
            return
        now = self.clock()
        for timer in await self.engine.pending_timers():
            if timer.id in self.scheduled:
                continue
            self.scheduled.add(timer.id)
            self.job_queue.run_once(
                _fire_timer,
                when=timedelta(seconds=max(0, timer.due_at - now)),
                data=timer.id,
                name=f"flatpact-timer-{timer.id}",
            )

    def retry_soon(self) -> None:
        """Try the outbox again after a short pause (flood control, network trouble)."""
        if self.job_queue is not None:
            self.job_queue.run_once(_retry_outbox, when=1.0, name="flatpact-retry")


def runtime_of(context: AnyContext | ContextTypes.DEFAULT_TYPE) -> Runtime:
    found = context.application.bot_data.get(RUNTIME_KEY)
    if not isinstance(found, Runtime):
        raise RuntimeError(
            "the bot is not started: run post_init (bot.adapter.application.running) first"
        )
    return found


async def _fire_timer(context: AnyContext) -> None:
    job: Job[Any] | None = context.job
    timer_id = job.data if job is not None else "?"
    runtime = runtime_of(context)
    runtime.scheduled.discard(timer_id if isinstance(timer_id, int) else -1)
    await runtime.handle(Tick(f"tick:{timer_id}", runtime.clock()))


async def _retry_outbox(context: AnyContext) -> None:
    await runtime_of(context).delivery.send_soon()


async def retention_job(context: AnyContext) -> None:
    """Once a day: the retention policy (:mod:`bot.rounds.retention`)."""
    runtime = runtime_of(context)
    forgotten = await runtime.engine.forget(runtime.clock())
    if forgotten:
        log.info("retention: deleted the private answers of %d finished rounds", len(forgotten))


async def retry_outbox_job(context: AnyContext) -> None:
    """The periodic safety net: whatever is still pending gets another try."""
    await runtime_of(context).delivery.send_soon()
