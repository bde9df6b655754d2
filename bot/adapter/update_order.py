"""Updates of different chats are handled side by side; one chat's updates one at a time.

PTB handles updates one by one unless ``concurrent_updates`` is set; then they all run at
once. Flatpact needs the middle: a busy group must not hold up anyone else, but within a chat
order matters (``/newround`` before ``/begin``; replies of the guided set-up, which PTB's
``ConversationHandler`` expects in order). This processor takes a lock per chat, so a chat's
updates start in the order Telegram sent them and never overlap.

Button presses take a lock of their own per chat: they are answered at once and must not
queue behind a command whose reply waits for the group's message budget. Presses in
different chats (the private chats of one group's members) may overlap: the engine's
transactions put them in one order.
"""

from __future__ import annotations

import asyncio
from collections.abc import Awaitable
from typing import Any

from telegram import Update
from telegram.ext import BaseUpdateProcessor

#: Updates handled at once across all chats.
MAX_CONCURRENT_UPDATES = 64


Lane = tuple[str, int | None]


def lane_of(update: object) -> Lane:
    """Which queue an update waits in: its chat's presses, or its chat's other updates."""
    if not isinstance(update, Update):
        return ("other", None)
    chat = update.effective_chat.id if update.effective_chat is not None else None
    return ("presses" if update.callback_query is not None else "messages", chat)


class OnePerChat(BaseUpdateProcessor):
    """Concurrent across chats, in order within a chat."""

    def __init__(self, max_concurrent_updates: int = MAX_CONCURRENT_UPDATES) -> None:
        super().__init__(max_concurrent_updates)
        self._locks: dict[Lane, asyncio.Lock] = {}
        self._users: dict[Lane, int] = {}

    async def do_process_update(self, update: object, coroutine: Awaitable[Any]) -> None:
        key = lane_of(update)
        lock = self._locks.setdefault(key, asyncio.Lock())
        self._users[key] = self._users.get(key, 0) + 1
        try:
            async with lock:
                await coroutine
        finally:
            self._users[key] -= 1
            if not self._users[key]:  # nobody else waits for this chat: forget its lock
                del self._users[key]
                del self._locks[key]

    async def initialize(self) -> None:
        """Nothing to set up."""

    async def shutdown(self) -> None:
        """Nothing to release."""
