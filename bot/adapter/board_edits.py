"""Coalesced edits of each group's progress message: at most one per interval, latest last.

Every answer changes the group's progress line, and a busy round would edit it many times a
minute, spending the group's message budget on a line nobody reads that fast. A request
here only marks the round's line as out of date; one task per round rewrites it right away
if the last rewrite is ``every`` seconds old, otherwise when it is. Requests arriving during a
rewrite mark it out of date again, so the last rewrite always shows the latest state.
"""

from __future__ import annotations

import asyncio
import contextlib
import logging
import time
from collections.abc import Awaitable, Callable

log = logging.getLogger(__name__)

#: Seconds between two edits of one group's progress message (common practice: a few seconds
#: keeps a live counter readable and well inside the group message budget).
BOARD_EDIT_EVERY = 3.0


class CoalescedEdits:
    """``request(key)`` schedules ``rewrite(key)``; rewrites of one key are ``every`` s apart."""

    def __init__(
        self,
        rewrite: Callable[[int], Awaitable[None]],
        every: float = BOARD_EDIT_EVERY,
        *,
        now: Callable[[], float] = time.monotonic,
        sleep: Callable[[float], Awaitable[None]] = asyncio.sleep,
    ) -> None:
        self._rewrite = rewrite
        self._every = every
        self._now = now
        self._sleep = sleep
        self._stale: set[int] = set()
        self._last: dict[int, float] = {}
        self._tasks: dict[int, asyncio.Task[None]] = {}

    def request(self, key: int) -> None:
        """The line for ``key`` is out of date; never waits."""
        self._stale.add(key)
        task = self._tasks.get(key)
        if task is None or task.done():
            self._tasks[key] = asyncio.create_task(self._run(key), name=f"flatpact-board-{key}")

    async def _run(self, key: int) -> None:
        try:
            while key in self._stale:
                last = self._last.get(key)
                if last is not None:
                    wait = last + self._every - self._now()
                    if wait > 0:
                        await self._sleep(wait)
                self._stale.discard(key)
                self._last[key] = self._now()
                try:
                    await self._rewrite(key)
                except Exception:
                    log.exception("progress message %s not rewritten", key)
        finally:
            if self._tasks.get(key) is asyncio.current_task():
                del self._tasks[key]

    async def wait(self) -> None:
        """Wait until every pending rewrite is done (tests, benchmarks)."""
        while self._tasks:
            await asyncio.gather(*list(self._tasks.values()))

    async def close(self, *, finish: bool = False) -> None:
        """Stop the rewrite tasks (at shutdown); with ``finish``, rewrite what is pending now,
        once each, without waiting for the interval."""
        pending = set(self._tasks) | self._stale
        tasks = list(self._tasks.values())
        for task in tasks:
            task.cancel()
        for task in tasks:
            with contextlib.suppress(asyncio.CancelledError):
                await task
        self._tasks.clear()
        self._stale.clear()
        for key in sorted(pending) if finish else ():
            try:
                await self._rewrite(key)
            except Exception:
                log.exception("progress message %s not rewritten at shutdown", key)
