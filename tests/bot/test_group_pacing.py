"""Group pacing: one sliding minute per group counting sends and edits; coalesced progress edits;
updates of one chat in order while other chats go on.

The limit of about 20 messages a minute per group is common practice (Telegram Bot FAQ; from
memory). Time here is a fake clock that only moves when someone waits, so the checks count
calls in windows and never measure real time.
"""

from __future__ import annotations

import asyncio
import itertools
from typing import Any

from telegram import Chat, Update, User
from telegram.ext import AIORateLimiter

from bot.adapter.board_edits import CoalescedEdits
from bot.adapter.group_pace import GroupPacedRateLimiter, SlidingMinute
from bot.adapter.update_order import OnePerChat


class FakeTime:
    """A fake clock. ``auto``: a sleep moves it forward at once; otherwise a sleeper waits
    until the test calls :meth:`advance` past its wake-up time."""

    def __init__(self, *, auto: bool = True) -> None:
        self.now = 0.0
        self.auto = auto
        self._sleepers: list[tuple[float, asyncio.Future[None]]] = []

    def __call__(self) -> float:
        return self.now

    async def sleep(self, seconds: float) -> None:
        wake = self.now + seconds
        if self.auto:
            self.now = wake
            await asyncio.sleep(0)
            return
        woken: asyncio.Future[None] = asyncio.get_running_loop().create_future()
        self._sleepers.append((wake, woken))
        await woken

    async def advance(self, seconds: float) -> None:
        self.now += seconds
        due = [(w, f) for w, f in self._sleepers if w <= self.now]
        self._sleepers = [(w, f) for w, f in self._sleepers if w > self.now]
        for _, woken in due:
            woken.set_result(None)
        for _ in range(5):
            await asyncio.sleep(0)


def most_in_any_window(times: list[float], period: float = 60.0) -> int:
    """The largest number of calls inside one half-open window of ``period`` seconds."""
    return max(sum(1 for t in times if start <= t < start + period) for start in times)


async def test_no_sliding_minute_holds_more_than_the_limit() -> None:
    time = FakeTime()
    minute = SlidingMinute(20, now=time, sleep=time.sleep)
    taken = []
    for _ in range(65):
        await minute.take(-100)
        taken.append(time.now)
    assert most_in_any_window(taken) == 20
    assert taken[19] == 0.0 and taken[20] == 60.0  # the 21st waits for the first to age out


async def test_ptbs_bucket_lets_a_minute_hold_more() -> None:
    # The reason for SlidingMinute: PTB's leaky bucket (aiolimiter) refills continuously, so
    # after a burst it lets calls through every 3 s and a minute holds more than 20.
    from aiolimiter import AsyncLimiter

    loop = asyncio.get_running_loop()
    limiter = AsyncLimiter(20, 60)
    time = FakeTime()
    original = loop.time
    loop.time = time  # type: ignore[method-assign]
    try:
        taken = []
        for _ in range(30):
            while not limiter.has_capacity():
                await time.sleep(0.5)
            await limiter.acquire()
            taken.append(time.now)
    finally:
        loop.time = original  # type: ignore[method-assign]
    assert most_in_any_window(taken) > 20


async def test_one_groups_full_minute_does_not_hold_up_another() -> None:
    time = FakeTime()
    minute = SlidingMinute(3, now=time, sleep=time.sleep)
    for _ in range(3):
        await minute.take(-1)
    assert minute.free_in(-1) == 60.0
    await minute.take(-2)
    assert time.now == 0.0 and minute.used(-2) == 1


async def test_edits_and_sends_count_against_one_group_minute() -> None:
    time = FakeTime()
    limiter = GroupPacedRateLimiter(20)
    limiter.minute = SlidingMinute(20, now=time, sleep=time.sleep)
    calls: list[tuple[str, float]] = []

    async def call(endpoint: str, chat_id: int) -> Any:
        async def send() -> bool:
            calls.append((endpoint, time.now))
            return True

        return await limiter.process_request(send, (), {}, endpoint, {"chat_id": chat_id}, None)

    for i in range(30):
        await call("editMessageText" if i % 2 else "sendMessage", -500)
    await call("answerCallbackQuery", -500)  # not a message: never waits
    await call("sendMessage", 42)  # a private chat: not a group's minute
    group_calls = [t for endpoint, t in calls[:30]]
    assert most_in_any_window(group_calls) == 20
    assert {e for e, _ in calls[:30]} == {"editMessageText", "sendMessage"}
    assert isinstance(limiter, AIORateLimiter)  # overall limit and flood retries stay PTB's


async def test_progress_edits_are_coalesced_and_end_with_the_latest_state() -> None:
    time = FakeTime(auto=False)
    state = {"answers": 0}
    shown: list[tuple[float, int]] = []

    async def rewrite(key: int) -> None:
        shown.append((time.now, state["answers"]))

    edits = CoalescedEdits(rewrite, 3.0, now=time, sleep=time.sleep)
    for answer in range(1, 21):  # twenty answers, one every half second
        state["answers"] = answer
        edits.request(7)
        await asyncio.sleep(0)  # let the rewrite task run at this moment
        await time.advance(0.5)
    await time.advance(3.0)
    await edits.wait()
    assert shown[0] == (0.0, 1)  # the first change shows at once
    assert shown[-1][1] == 20  # the last edit shows the latest state
    gaps = [b[0] - a[0] for a, b in itertools.pairwise(shown)]
    assert gaps and min(gaps) >= 3.0  # at most one edit every 3 s
    assert len(shown) == 5  # at 0, 3, 6, 9 s and the last one: five edits for twenty answers


def _update(update_id: int, chat_id: int, *, press: bool = False) -> Update:
    from telegram import CallbackQuery, Message

    chat = Chat(chat_id, Chat.GROUP if chat_id < 0 else Chat.PRIVATE)
    user = User(1, "Ines", False)
    message = Message(update_id, None, chat, from_user=user, text="/status")  # type: ignore[arg-type]
    if press:
        query = CallbackQuery(str(update_id), user, "instance", message=message, data="fp1:x")
        return Update(update_id, callback_query=query)
    return Update(update_id, message=message)


async def test_one_chat_in_order_other_chats_and_presses_alongside() -> None:
    processor = OnePerChat(8)
    log: list[str] = []
    slow_gate = asyncio.Event()

    async def handle(name: str, wait: asyncio.Event | None = None) -> None:
        log.append(f"start {name}")
        if wait is not None:
            await wait.wait()
        log.append(f"end {name}")

    tasks = [
        asyncio.create_task(processor.process_update(_update(1, -1), handle("A1", slow_gate))),
        asyncio.create_task(processor.process_update(_update(2, -1), handle("A2"))),
        asyncio.create_task(processor.process_update(_update(3, -2), handle("B1"))),
        asyncio.create_task(
            processor.process_update(_update(4, -1, press=True), handle("A-press"))
        ),
    ]
    for _ in range(5):
        await asyncio.sleep(0)
    # B's update, and a press in A, ran to the end while A's first update still waits;
    # A's second update waits for A's first.
    assert log == ["start A1", "start B1", "end B1", "start A-press", "end A-press"]
    slow_gate.set()
    await asyncio.gather(*tasks)
    assert log[5:] == ["end A1", "start A2", "end A2"]
