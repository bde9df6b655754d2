"""Run a whole store transaction again when the database failed under it for a passing reason.

A PostgreSQL server restart or a dropped connection aborts the transaction in flight; the
event that was being handled is simply handled again. That is safe because the event's
idempotency key commits with its effects: if the commit did happen before the connection
died, the retry sees the key and changes nothing (its messages are already in the outbox).
"""

from __future__ import annotations

import asyncio
import logging
from collections.abc import Awaitable, Callable
from dataclasses import dataclass
from typing import TypeVar

from bot.rounds.errors import StorageUnavailable

log = logging.getLogger(__name__)
Result = TypeVar("Result")


@dataclass(frozen=True, slots=True)
class RetryPolicy:
    """Exponential back-off: ``first_delay``, doubling, capped at ``max_delay``, bounded.

    The defaults wait about 20 s in total, long enough for a database restart (a rule of thumb,
    common practice), short enough that Telegram's webhook retry is still useful after it.
    """

    attempts: int = 12
    first_delay: float = 0.05
    max_delay: float = 3.0


DEFAULT_POLICY = RetryPolicy()


async def retry_transient(
    attempt: Callable[[], Awaitable[Result]], policy: RetryPolicy = DEFAULT_POLICY
) -> Result:
    """Await ``attempt()``; on :class:`StorageUnavailable` wait and call it again."""
    delay = policy.first_delay
    for number in range(1, policy.attempts + 1):
        try:
            return await attempt()
        except StorageUnavailable as error:
            if number >= policy.attempts:
                raise
            log.warning("storage unavailable (attempt %d): %s; retrying", number, error)
            await asyncio.sleep(delay)
            delay = min(delay * 2, policy.max_delay)
    raise AssertionError("unreachable: the loop returns or raises")
