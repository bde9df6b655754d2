"""Acting as invented flatmates against the real bot: a real Application polls the stand-in.

The flat (12 Sorrel Lane), its rooms, people and amounts are invented for these tests.
Simulated tenants from :mod:`solver.simulate` decide every answer from the prices the bot
committed with each question (read back from the outbox row of that very message).
"""

from __future__ import annotations

import asyncio
import json
from collections.abc import Awaitable, Callable, Sequence
from dataclasses import dataclass, field
from decimal import Decimal
from pathlib import Path
from typing import Any

from babel.numbers import format_currency

from bot.app import build_application
from bot.messages import QuestionFacts
from bot.outbox_codec import decode
from bot.runtime import RUNTIME_KEY, AnyApp, Runtime
from bot.sandbox import BotApiStandIn, SimChat, SimMessage, SimUser
from bot.sandbox.bot_settings import settings_for
from bot.sqlite_store import SqliteStore
from solver import Problem
from solver.simulate import Tenant, random_tenants

ROOMS = ("Skylight", "Corner", "Garden side", "Nook", "Long room")
NAMES = ("Odile", "Farid", "Mirela", "Tane", "Yusuf")
CURRENCY = "EUR"
OUTBOX_COLUMNS = (
    "id",
    "event_key",
    "seq",
    "chat_id",
    "round_id",
    "kind",
    "ref",
    "payload",
    "state",
    "message_id",
    "created_at",
    "sent_at",
    "claimed_at",
)


def app_for(standin: BotApiStandIn, db_path: Path) -> AnyApp:
    return build_application(settings_for(standin, db_path))


def runtime(app: AnyApp) -> Runtime:
    found = app.bot_data[RUNTIME_KEY]
    assert isinstance(found, Runtime)
    return found


def euros(minor: int, locale: str = "en") -> str:
    """Independent formatting with Babel (CLDR data), to find prices in the bot's text."""
    return str(format_currency(Decimal(minor).scaleb(-2), CURRENCY, locale=locale))


async def outbox_rows(db_path: Path) -> list[dict[str, Any]]:
    """The outbox as stored, read through a separate connection to the same file."""
    store = await SqliteStore.open(db_path)
    try:
        rows = (await store.dump())["outbox"]
    finally:
        await store.close()
    return [dict(zip(OUTBOX_COLUMNS, row, strict=True)) for row in rows]


@dataclass
class Flat:
    """The group, its admin and members, and their simulated tastes."""

    standin: BotApiStandIn
    db_path: Path
    group: SimChat
    people: list[SimUser]
    tenants: dict[int, Tenant]
    rent: int
    pressed: set[tuple[int, int, int, str]] = field(default_factory=set)
    answers: int = 0
    #: runs right after each press is queued, before the bot has seen it (e.g. an upgrade)
    on_press: Callable[[], None] | None = None
    #: runs after every step of play_until_settled (invariant checks)
    after_step: Callable[[], Awaitable[None]] | None = None

    @property
    def admin(self) -> SimUser:
        return self.people[0]

    @classmethod
    def invent(
        cls,
        standin: BotApiStandIn,
        db_path: Path,
        size: int,
        rent: int,
        seed: int,
        *,
        open_chats: bool = True,
    ) -> Flat:
        world = standin.world
        people = [world.add_user(NAMES[i], language_code="en") for i in range(size)]
        group = world.add_group("12 Sorrel Lane", people)
        if open_chats:
            for person in people:
                world.user_opens_private_chat(person)
        problem = Problem(rent, ROOMS[:size], tuple(str(p.id) for p in people))
        simulated = random_tenants(problem, "quasi-linear", seed)
        return cls(
            standin, db_path, group, people, {p.id: simulated[str(p.id)] for p in people}, rent
        )

    # --- reading what the bot sent ------------------------------------------------------------

    def group_texts(self) -> list[str]:
        world = self.standin.world
        return [m.text or "" for m in world.messages_in(self.group) if m.from_bot]

    async def wait_group(self, fragment: str, timeout: float = 10) -> SimMessage:
        world = self.standin.world

        def found() -> SimMessage | None:
            return next(
                (
                    m
                    for m in reversed(world.messages_in(self.group))
                    if m.from_bot and fragment in (m.text or "")
                ),
                None,
            )

        return await self.standin.wait_for(found, timeout)

    def _open_question(self, person: SimUser) -> SimMessage | None:
        world = self.standin.world
        if not person.opened_private_chat:
            return None
        for message in world.messages_in(world.private_chat_of(person)):
            handled = (person.id, message.chat.id, message.message_id, "*") in self.pressed
            if _callback_data(message) and not handled:
                return message
        return None

    def _open_proposal(self) -> tuple[SimUser, SimMessage, str] | None:
        world = self.standin.world
        for message in world.messages_in(self.group):
            agree = [
                b.callback_data
                for row in message.buttons()
                for b in row
                if b.text == "Agree" and b.callback_data
            ]
            for person in self.people:
                for data in agree:
                    if (person.id, message.chat.id, message.message_id, data) not in self.pressed:
                        return person, message, data
        return None

    # --- acting -------------------------------------------------------------------------------

    async def press(self, person: SimUser, message: SimMessage, data: str) -> None:
        self.pressed.add((person.id, message.chat.id, message.message_id, data))
        record = self.standin.world.user_presses(person, message, data)
        if self.on_press is not None:
            self.on_press()
        await self.standin.wait_for(lambda: record.answered, timeout=10)

    async def answer(self, person: SimUser, message: SimMessage) -> None:
        """The tenant picks a room from the prices committed with this very message."""
        facts = await self.question_facts(message)
        room = self.tenants[person.id].choose(facts.prices, facts.choices, 0)
        # The text shows every price, formatted as Babel formats euros for English.
        for price in facts.prices:
            assert euros(price) in (message.text or "")
        label = f"I'd take {facts.rooms[room]}"
        data = next(b.callback_data for row in message.buttons() for b in row if b.text == label)
        assert data is not None
        self.answers += 1
        self.pressed.add((person.id, message.chat.id, message.message_id, "*"))
        await self.press(person, message, data)

    async def question_facts(self, message: SimMessage) -> QuestionFacts:
        """The facts stored with this message; the bot records the message id just after
        Telegram answers the send, so wait briefly for that write."""
        for _ in range(250):
            rows = await outbox_rows(self.db_path)
            row = next(
                (
                    r
                    for r in rows
                    if r["chat_id"] == message.chat.id and r["message_id"] == message.message_id
                ),
                None,
            )
            if row is not None:
                facts = decode(row["payload"]).facts
                assert isinstance(facts, QuestionFacts)
                return facts
            await asyncio.sleep(0.02)
        raise AssertionError(f"no outbox row for message {message.message_id}")

    async def play_until_settled(
        self,
        *,
        stop_after_answers: int | None = None,
        stop_when_group_sees: str | None = None,
        timeout: float = 60,
    ) -> SimMessage | None:
        """Answer questions and agree to proposals until the group sees the agreement."""
        world = self.standin.world

        def next_step() -> Any:
            settled = next(
                (
                    m
                    for m in world.messages_in(self.group)
                    if m.from_bot and (m.text or "").startswith("Everyone agreed")
                ),
                None,
            )
            if settled is not None:
                return ("settled", settled)
            if stop_when_group_sees and any(stop_when_group_sees in t for t in self.group_texts()):
                return ("stop",)
            for person in self.people:
                question = self._open_question(person)
                if question is not None:
                    return ("question", person, question)
            proposal = self._open_proposal()
            return ("agree", *proposal) if proposal else None

        from tests.adapter.privacy import assert_private_stays_private

        while True:
            # The promise people rely on most, checked after every step of every seeded run
            # (before looking for the next step, so nothing changes between finding and acting).
            await assert_private_stays_private(self.standin, self.db_path)
            if self.after_step is not None:
                await self.after_step()
            step = await self.standin.wait_for(next_step, timeout)
            if step[0] == "settled":
                return step[1]  # type: ignore[no-any-return]
            if step[0] == "stop":
                return None
            if stop_after_answers is not None and self.answers >= stop_after_answers:
                return None
            if step[0] == "question":
                await self.answer(step[1], step[2])
            else:
                await self.press(step[1], step[2], step[3])

    async def agreement(self) -> tuple[dict[str, int], list[int]]:
        """The stored agreement (assignment by user id, prices per room) from the audit log."""
        store = await SqliteStore.open(self.db_path)
        try:
            audit = (await store.dump())["audit"]
        finally:
            await store.close()
        detail = json.loads(next(row[5] for row in audit if row[3] == "agreement"))
        return detail["assignment"], detail["prices"]


def _callback_data(message: SimMessage) -> Sequence[str]:
    return [b.callback_data for row in message.buttons() for b in row if b.callback_data]
