"""One sender per chat: each chat's messages go out in order, different chats side by side.

A group that Telegram serves slowly (flood waits, our own per-group pacing) only delays its
own messages; every other chat keeps moving. Asking a busy sender for more never waits: it
notes that there is more, and the sender looks again before it stops.
"""

from __future__ import annotations

import asyncio
import contextlib
import logging
from collections.abc import Awaitable, Callable, Iterable

log = logging.getLogger(__name__)

#: Sends one chat's pending messages in order; False if sending must pause (try again later).
SendChat = Callable[[int], Awaitable[bool]]


class ChatSenders:
    """Runs ``send_chat(chat_id)`` in one task per chat, again while more arrives."""

    def __init__(self, send_chat: SendChat) -> None:
        self._send_chat = send_chat
        self._tasks: dict[int, asyncio.Task[bool]] = {}
        self._more: set[int] = set()

    def start(self, chat_ids: Iterable[int]) -> None:
        """Make sure each chat has a sender running (never waits)."""
        for chat_id in chat_ids:
            task = self._tasks.get(chat_id)
            if task is not None and not task.done():
                self._more.add(chat_id)
                continue
            self._tasks[chat_id] = asyncio.create_task(
                self._run(chat_id), name=f"flatpact-send-{chat_id}"
            )

    async def _run(self, chat_id: int) -> bool:
        try:
            while True:
                self._more.discard(chat_id)
                if not await self._send_chat(chat_id):
                    return False
                if chat_id not in self._more:
                    return True
        except Exception:
            log.exception("sending to chat %s failed; the outbox keeps the rest", chat_id)
            return False
        finally:
            if self._tasks.get(chat_id) is asyncio.current_task():
                del self._tasks[chat_id]

    async def wait(self) -> bool:
        """Wait until every sender has stopped; False if any of them had to pause."""
        done = True
        while self._tasks:
            results = await asyncio.gather(*list(self._tasks.values()))
            done = done and all(results)
        return done

    def busy(self) -> int:
        """How many chats are being sent to now."""
        return sum(1 for task in self._tasks.values() if not task.done())

    async def close(self) -> None:
        """Stop every sender (at shutdown); what they did not send stays in the outbox."""
        tasks = list(self._tasks.values())
        for task in tasks:
            task.cancel()
        for task in tasks:
            with contextlib.suppress(asyncio.CancelledError):
                await task
        self._tasks.clear()
