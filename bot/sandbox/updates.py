"""The queue of updates waiting for the bot, with Telegram's getUpdates semantics.

Updates stay until the bot confirms them by asking for a higher offset, long polls wait until
something arrives, and a second poller ends the first with a 409, exactly the behaviours a
polling bot has to get right. The webhook deliverer (:mod:`bot.sandbox.webhook`) drains the
same queue.
"""

from __future__ import annotations

import asyncio
from typing import Any

from bot.sandbox.errors import conflict

FIRST_UPDATE_ID = 100_000_001
DEFAULT_EXCLUDED = frozenset({"chat_member", "message_reaction", "message_reaction_count"})


class Notifier:
    """Wakes everyone waiting for "something changed" (long polls, wait_for in tests)."""

    def __init__(self) -> None:
        self._event = asyncio.Event()

    def notify(self) -> None:
        """Wake current waiters; later waiters wait for the next change."""
        self._event.set()
        self._event = asyncio.Event()

    async def wait(self, timeout: float) -> bool:
        """Wait for the next change; False if the timeout passed first."""
        event = self._event
        try:
            await asyncio.wait_for(event.wait(), timeout)
        except TimeoutError:
            return False
        return True


def update_kind(update: dict[str, Any]) -> str:
    """The update's type name, i.e. its one field besides update_id."""
    return next(key for key in update if key != "update_id")


class UpdateQueue:
    """Pending updates in id order, plus the allowed_updates filter the bot last asked for."""

    def __init__(self, notifier: Notifier) -> None:
        self.pending: list[dict[str, Any]] = []
        self.allowed_updates: list[str] = []
        self.closing = False
        self._next_id = FIRST_UPDATE_ID
        self._notifier = notifier
        self._again: set[int] = set()
        self.history: dict[int, dict[str, Any]] = {}
        self._poll_generation = 0

    def add(self, kind: str, payload: dict[str, Any]) -> dict[str, Any]:
        """Queue one update and wake the long poll."""
        update = {"update_id": self._next_id, kind: payload}
        self.history[self._next_id] = update
        self._next_id += 1
        self.pending.append(update)
        self._notifier.notify()
        return update

    def add_again(self, update_id: int) -> None:
        """Deliver an update a second time, same update_id: what a bot sees when Telegram
        resends (its confirmation was lost, or a webhook answer timed out)."""
        self._again.add(update_id)
        self.pending.append(self.history[update_id])
        self._notifier.notify()

    def remove(self, update_id: int) -> None:
        """A webhook delivery was accepted (or given up): the update leaves the queue."""
        self.pending = [u for u in self.pending if u["update_id"] != update_id]

    def drop_all(self) -> None:
        """drop_pending_updates=True on setWebhook/deleteWebhook."""
        self.pending.clear()

    def _allowed(self, update: dict[str, Any]) -> bool:
        kind = update_kind(update)
        if self.allowed_updates:
            return kind in self.allowed_updates
        return kind not in DEFAULT_EXCLUDED

    def _confirm(self, offset: int) -> None:
        """Forget updates below offset (a negative offset keeps only the last -offset)."""
        if offset < 0:
            self.pending = self.pending[offset:]
        elif offset:
            self.pending = [
                u for u in self.pending if u["update_id"] >= offset or u["update_id"] in self._again
            ]
        self.pending = [u for u in self.pending if self._allowed(u)]

    def take(self, offset: int, limit: int) -> list[dict[str, Any]]:
        """Confirm below offset, then return up to limit updates without removing them."""
        self._confirm(offset)
        found = self.pending[:limit]
        resent = [u for u in found if u["update_id"] in self._again]
        if resent:  # a resent update is handed out once, then confirmed like the rest
            self._again.difference_update(u["update_id"] for u in resent)
            self.pending = [u for u in self.pending if u not in resent]
        return found

    async def poll(
        self, offset: int, limit: int, timeout: float, allowed: list[str] | None
    ) -> list[dict[str, Any]]:
        """getUpdates: answer at once if anything is pending, else wait up to timeout seconds."""
        if allowed is not None:
            self.allowed_updates = allowed
        self._poll_generation += 1
        generation = self._poll_generation
        self._notifier.notify()
        deadline = asyncio.get_running_loop().time() + timeout
        while True:
            found = self.take(offset, limit)
            remaining = deadline - asyncio.get_running_loop().time()
            if found or remaining <= 0 or self.closing:
                return found
            await self._notifier.wait(remaining)
            if generation != self._poll_generation:
                raise conflict(
                    "terminated by other getUpdates request; "
                    "make sure that only one bot instance is running"
                )
