"""Updates of different chats are handled side by side; one chat's updates one at a time.

PTB handles updates one by one unless ``concurrent_updates`` is set; then they all run at
once. Flatpact needs the middle: a busy group must not hold up anyone else, but within a chat
order matters (``/newround`` before ``/begin``; replies of the guided set-up, which PTB's
``ConversationHandler`` expects in order). This processor takes a lock per chat, so a chat's
updates start in the order Telegram sent them and never overlap. Presses in different
private chats of one group may overlap: the engine's transactions put them in one order.
"""

from __future__ import annotations

import asyncio
from collections.abc import Awaitable
from typing import Any

from telegram import Update
from telegram.ext import BaseUpdateProcessor

#: Updates handled at once across all chats.
MAX_CONCURRENT_UPDATES = 64


def chat_of(update: object) -> int | None:
    """The chat an update belongs to (a button press: the chat of its message)."""
    if isinstance(update, Update) and update.effective_chat is not None:
        return update.effective_chat.id
    return None


class OnePerChat(BaseUpdateProcessor):
    """Concurrent across chats, in order within a chat."""

    def __init__(self, max_concurrent_updates: int = MAX_CONCURRENT_UPDATES) -> None:
        super().__init__(max_concurrent_updates)
        self._locks: dict[int | None, asyncio.Lock] = {}
        self._users: dict[int | None, int] = {}

    async def do_process_update(self, update: object, coroutine: Awaitable[Any]) -> None:
        key = chat_of(update)
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
