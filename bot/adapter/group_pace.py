"""Per-group pacing over one sliding minute, counting sends *and* edits.

Telegram asks bots not to post more than about 20 messages a minute in one group (Bot API
FAQ, "broadcasting to users"; from memory, so this is common practice rather than a
documented contract). PTB's ``AIORateLimiter`` paces a group with a leaky bucket: it lets a
burst through and then spaces calls, so a minute can hold more than the limit. Here every
call that puts something on a group's screen (a message, an edit, a file) takes a slot in
that group's own sliding minute and waits until one is free; other chats never wait for it.
PTB's limiter still applies the overall per-second limit and retries flood errors.
"""

from __future__ import annotations

import asyncio
import contextlib
import time
from collections import deque
from collections.abc import Awaitable, Callable, Coroutine
from typing import Any

from telegram.ext import AIORateLimiter

JSONDict = dict[str, Any]
#: Common practice (see the module docstring): messages and edits per group per minute.
GROUP_MESSAGES_PER_MINUTE = 20
MINUTE = 60.0
#: Calls that leave a minute apart may arrive a little closer together (network, server
#: queues); the limiter's minute is this much longer so Telegram's minute is never overfull.
TRANSPORT_SLACK = 1.0
#: Bot API methods that show something in a chat, so they count against its minute.
COUNTED_METHODS = frozenset(
    name.lower()
    for name in (
        "sendMessage",
        "editMessageText",
        "editMessageReplyMarkup",
        "editMessageCaption",
        "sendPhoto",
        "sendDocument",
        "sendMediaGroup",
        "copyMessage",
        "forwardMessage",
    )
)


class SlidingMinute:
    """At most ``limit`` slots per key in any ``period`` seconds; ``take`` waits its turn."""

    def __init__(
        self,
        limit: int,
        period: float = MINUTE,
        *,
        now: Callable[[], float] = time.monotonic,
        sleep: Callable[[float], Awaitable[None]] = asyncio.sleep,
    ) -> None:
        if limit < 1:
            raise ValueError("a sliding minute needs room for at least one call")
        self.limit = limit
        self.period = period
        self._now = now
        self._sleep = sleep
        self._taken: dict[int, deque[float]] = {}
        self._turns: dict[int, asyncio.Lock] = {}

    def used(self, key: int) -> int:
        """Slots taken for ``key`` within the last period."""
        return len(self._recent(key))

    def free_in(self, key: int) -> float:
        """Seconds until ``key`` has a free slot (0 if it has one now)."""
        taken = self._recent(key)
        if len(taken) < self.limit:
            return 0.0
        return max(0.0, taken[len(taken) - self.limit] + self.period - self._now())

    async def take(self, key: int) -> None:
        """Wait for a free slot for ``key`` (first come, first served) and take it."""
        turn = self._turns.setdefault(key, asyncio.Lock())
        async with turn:
            while (wait := self.free_in(key)) > 0:
                await self._sleep(wait)
            self._taken.setdefault(key, deque()).append(self._now())
        if not turn.locked() and not self._taken.get(key):
            self._turns.pop(key, None)

    def _recent(self, key: int) -> deque[float]:
        taken = self._taken.get(key)
        if taken is None:
            return deque()
        cutoff = self._now() - self.period
        while taken and taken[0] <= cutoff:
            taken.popleft()
        return taken


def group_of(data: dict[str, Any]) -> int | None:
    """The group or supergroup a call is addressed to (negative chat ids), else None."""
    chat_id = data.get("chat_id")
    with contextlib.suppress(TypeError, ValueError):
        chat_id = int(chat_id)  # type: ignore[arg-type]
    return chat_id if isinstance(chat_id, int) and chat_id < 0 else None


class GroupPacedRateLimiter(AIORateLimiter):
    """PTB's limiter for the overall rate and flood retries, plus :class:`SlidingMinute`."""

    def __init__(
        self, per_group_minute: int = GROUP_MESSAGES_PER_MINUTE, *, max_retries: int = 0
    ) -> None:
        # group_max_rate=0 switches PTB's own per-group bucket off: the minute below replaces it.
        super().__init__(group_max_rate=0, max_retries=max_retries)
        self.minute = SlidingMinute(per_group_minute, MINUTE + TRANSPORT_SLACK)

    async def process_request(
        self,
        callback: Callable[..., Coroutine[Any, Any, bool | JSONDict | list[JSONDict]]],
        args: Any,
        kwargs: dict[str, Any],
        endpoint: str,
        data: dict[str, Any],
        rate_limit_args: int | None,
    ) -> bool | JSONDict | list[JSONDict]:
        group = group_of(data)
        if group is None or endpoint.lower() not in COUNTED_METHODS:
            return await super().process_request(
                callback, args, kwargs, endpoint, data, rate_limit_args
            )

        async def paced(*call_args: Any, **call_kwargs: Any) -> bool | JSONDict | list[JSONDict]:
            # The slot is taken last, after PTB's overall limiter, right before the request
            # leaves: waiting there first would let calls arrive closer than a minute apart.
            await self.minute.take(group)
            return await callback(*call_args, **call_kwargs)

        return await super().process_request(paced, args, kwargs, endpoint, data, rate_limit_args)
