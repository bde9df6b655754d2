"""Acting as invented flatmates against the real bot: a real Application polls the stand-in.

The flat is the demo's invented one (:mod:`bot.demo.flat`: its address, rooms and people) and
the flatmates are the demo's (:class:`bot.demo.flatmates.Household`), taking turns in a fixed
order so runs repeat. Simulated tenants from :mod:`solver.simulate` decide every answer from
the prices shown in the question's text; :meth:`Flat.answer` also checks them against the
prices the bot committed with that very message (its outbox row).
"""

from __future__ import annotations

import asyncio
import json
from collections.abc import Awaitable, Callable
from dataclasses import dataclass
from decimal import Decimal
from pathlib import Path
from typing import Any

from babel.numbers import format_currency

from bot.adapter.application import build_application
from bot.adapter.runtime import RUNTIME_KEY, AnyApp, Runtime
from bot.demo.flat import ADDRESS, CURRENCY, DECIMALS, FLATMATES, SimulatedMind
from bot.demo.flat import ROOMS as DEMO_ROOMS
from bot.demo.flatmates import Flatmate, Household
from bot.demo.standin_settings import settings_for
from bot.rounds.messages import QuestionFacts
from bot.rounds.outbox_codec import decode
from bot.sandbox import BotApiStandIn, SimChat, SimMessage, SimUser
from bot.storage.sqlite import SqliteStore
from solver import Problem
from solver.simulate import Tenant, random_tenants

ROOMS = tuple(room.name for room in DEMO_ROOMS)
NAMES = FLATMATES
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
    people: list[SimUser]
    tenants: dict[int, Tenant]
    rent: int
    household: Household
    #: runs right after each press is queued, before the bot has seen it (e.g. an upgrade)
    on_press: Callable[[], None] | None = None
    #: runs after every step of play_until_settled (invariant checks)
    after_step: Callable[[], Awaitable[None]] | None = None

    def __post_init__(self) -> None:
        self.household.on_press = lambda mate, message, label: self._pressed()

    def _pressed(self) -> None:
        if self.on_press is not None:
            self.on_press()

    @property
    def group(self) -> SimChat:
        """The group chat (after a supergroup upgrade, the new one: set it here)."""
        return self.household.group

    @group.setter
    def group(self, chat: SimChat) -> None:
        self.household.group = chat

    @property
    def admin(self) -> SimUser:
        return self.people[0]

    @property
    def answers(self) -> int:
        """Questions the flatmates have answered so far."""
        return sum(mate.answered for mate in self.household.flatmates)

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
        group = world.add_group(ADDRESS, people)
        if open_chats:
            for person in people:
                world.user_opens_private_chat(person)
        problem = Problem(rent, ROOMS[:size], tuple(str(p.id) for p in people))
        simulated = random_tenants(problem, "quasi-linear", seed)
        tenants = {p.id: simulated[str(p.id)] for p in people}
        mates = [Flatmate(p, SimulatedMind(tenants[p.id])) for p in people]
        household = Household(standin, group, mates, ROOMS[:size], DECIMALS)
        return cls(standin, db_path, people, tenants, rent, household)

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
                    if m.from_bot and fragment in (m.text or m.caption or "")
                ),
                None,
            )

        return await self.standin.wait_for(found, timeout)

    # --- acting -------------------------------------------------------------------------------

    def _mate(self, person: SimUser) -> Flatmate:
        return next(m for m in self.household.flatmates if m.user.id == person.id)

    async def press(self, person: SimUser, message: SimMessage, data: str) -> None:
        """Press as this person; their flatmate will not act on that message again."""
        mate = self._mate(person)
        mate.seen.add((message.chat.id, message.message_id))
        await self.household.press(mate, message, data)

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
        self._mate(person).answered += 1
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
        """The flatmates answer and agree, in turns, until the group sees the agreement.

        Returns the agreement message, or None when stopped early (after that many answers,
        or once the group saw that text).
        """
        world = self.standin.world

        def done() -> tuple[SimMessage | None] | None:
            settled = next(
                (
                    m
                    for m in world.messages_in(self.group)
                    if m.from_bot and (m.text or m.caption or "").startswith("Everyone agreed")
                ),
                None,
            )
            if settled is not None:
                return (settled,)
            if stop_when_group_sees and any(stop_when_group_sees in t for t in self.group_texts()):
                return (None,)
            if stop_after_answers is not None and self.answers >= stop_after_answers:
                return (None,)
            return None

        from tests.adapter.privacy import assert_private_stays_private

        async def check() -> None:
            # The promise people rely on most, checked before every step of every seeded run.
            await assert_private_stays_private(self.standin, self.db_path)
            if self.after_step is not None:
                await self.after_step()

        return (await self.household.take_turns(done, timeout=timeout, before_each=check))[0]

    async def agreement(self) -> tuple[dict[str, int], list[int]]:
        """The stored agreement (assignment by user id, prices per room) from the audit log."""
        store = await SqliteStore.open(self.db_path)
        try:
            audit = (await store.dump())["audit"]
        finally:
            await store.close()
        detail = json.loads(next(row[5] for row in audit if row[3] == "agreement"))
        return detail["assignment"], detail["prices"]
