"""Flatmates acting in the stand-in's world: they read what Telegram shows and press buttons.

The demo and the tests need people who do exactly what a person would: tap "join", open the
private chat through the group's link, read each private question, tap a room, answer the
proposal. A :class:`Mind` decides (a simulated tenant's hidden values, or a person typing at
the terminal); the :class:`Household` does the reading and pressing, one task per flatmate, so
nobody waits for anybody else unless the bot makes them.

A flatmate sees only message text and buttons, never the bot's database: prices are read
back from the question text (the amounts Babel wrote), rooms from the button labels.
"""

from __future__ import annotations

import asyncio
import re
from collections.abc import Awaitable, Callable, Sequence
from dataclasses import dataclass, field
from decimal import InvalidOperation
from typing import Generic, Protocol, TypeVar
from urllib.parse import parse_qs, urlparse

from babel.numbers import get_decimal_symbol, get_group_symbol, parse_decimal

from bot.adapter.keyboards import button_label
from bot.adapter.private_texts import ROUGH_INVITE_OPENING
from bot.rounds.messages import Action, Choice
from bot.sandbox.models import SimChat, SimMessage, SimUser
from bot.sandbox.server import BotApiStandIn

T = TypeVar("T")


class UnreadableMessage(ValueError):
    """A message does not show what a person needs to decide (a price is missing)."""


def amount_shown(shown: str, decimals: int, locale: str = "en") -> int:
    """``€1,234.50`` -> 123450: the exact minor units a formatted amount stands for."""
    decimal_sign, group_sign = get_decimal_symbol(locale), get_group_symbol(locale)
    kept = "".join(c for c in shown if c.isdigit() or c in (decimal_sign, group_sign, "-"))
    try:
        value = parse_decimal(kept, locale=locale).scaleb(decimals)
    except (InvalidOperation, ValueError) as bad:
        raise UnreadableMessage(f"{shown!r} is not an amount") from bad
    if value != value.to_integral_value():
        raise UnreadableMessage(f"{shown!r} has more than {decimals} decimals")
    return int(value)


def prices_shown(
    text: str, rooms: Sequence[str], decimals: int, locale: str = "en"
) -> tuple[int, ...]:
    """Each room's price from lines like ``• Loft: €580.00``, in the rooms' order."""
    prices = []
    for room in rooms:
        match = re.search(rf"^\W*{re.escape(room)}:\s*(?P<amount>.+)$", text, re.MULTILINE)
        if match is None:
            raise UnreadableMessage(f"no price for {room!r} in {text!r}")
        prices.append(amount_shown(match.group("amount"), decimals, locale))
    return tuple(prices)


def start_payload(url: str | None) -> str | None:
    """The ``start`` parameter of a t.me deep link, or None."""
    if not url:
        return None
    found = parse_qs(urlparse(url).query).get("start")
    return found[0] if found else None


@dataclass(frozen=True, slots=True)
class Asked:
    """A private question as its reader sees it: prices per room and the rooms on offer."""

    message: SimMessage
    prices: tuple[int, ...]
    offered: dict[int, str]


@dataclass(frozen=True, slots=True)
class Proposed:
    """The suggested split in the group, with its agree and swap buttons (no swap button
    once objections are used up: then the choice is to agree, or wait for the admin)."""

    message: SimMessage
    agree: str
    swap: str | None


#: What a :class:`Mind` may return from ``pick_room`` instead of a room: "I pressed the wrong
#: room in my last answer" (the flatmate then uses that answer's "I meant another room").
CHANGE_LAST = -1


@dataclass(frozen=True, slots=True)
class Prompted:
    """After "rather swap": the private question naming the rooms one could take instead."""

    message: SimMessage
    offered: dict[int, str]


@dataclass(frozen=True, slots=True)
class Stopped:
    """The round is over; nothing more to read."""


STOPPED = Stopped()


@dataclass(frozen=True, slots=True)
class Finished(Generic[T]):
    """What :meth:`Household.take_turns` was waiting for."""

    value: T


Step = Asked | Proposed | Prompted


class Mind(Protocol):
    """Who decides for a flatmate: a simulated tenant, or a person at the terminal."""

    async def pick_room(self, name: str, asked: Asked) -> int:
        """The room (an index of ``asked.offered``) to take at ``asked.prices``."""
        ...

    async def respond(self, name: str, proposed: Proposed) -> int | None:
        """None to agree, else the room one would rather have at the proposed prices."""
        ...

    async def rough_values(self, name: str, rooms: tuple[str, ...]) -> str | None:
        """What to reply to the invitation to give rough values (None: skip it)."""
        ...


@dataclass
class Flatmate:
    """A simulated person and what they have done so far."""

    user: SimUser
    mind: Mind
    answered: int = 0
    wants: int | None = None
    seen: set[tuple[int, int]] = field(default_factory=set)

    @property
    def name(self) -> str:
        return self.user.first_name


#: Called after every press: who, in which message, the button's label.
PressReport = Callable[[Flatmate, SimMessage, str], None]


@dataclass
class Household:
    """The flatmates of one group, each living in their own task until :meth:`stop`."""

    standin: BotApiStandIn
    group: SimChat
    flatmates: list[Flatmate]
    rooms: tuple[str, ...]
    decimals: int
    locale: str = "en"
    patience: float = 60.0
    on_press: PressReport | None = None
    _stopped: bool = False

    # --- reading ------------------------------------------------------------------------------

    def _buttons(self, message: SimMessage, action: Action) -> dict[int, str]:
        """Room index -> callback data, for the buttons of one kind (labels as the bot makes)."""
        labels = {
            button_label(Choice(action, "_", room), self.rooms): room
            for room in range(len(self.rooms))
        }
        return {
            labels[b.text]: b.callback_data
            for row in message.buttons()
            for b in row
            if b.text in labels and b.callback_data
        }

    def _button(self, message: SimMessage, action: Action) -> str | None:
        label = button_label(Choice(action, "_"), self.rooms)
        found = [b.callback_data for row in message.buttons() for b in row if b.text == label]
        return found[0] if found else None

    def _next_step(self, mate: Flatmate) -> Step | None:
        """The oldest thing waiting for this flatmate: a question, a prompt or a proposal."""
        world = self.standin.world
        if mate.user.opened_private_chat:
            for message in world.messages_in(world.private_chat_of(mate.user)):
                if not message.from_bot or (message.chat.id, message.message_id) in mate.seen:
                    continue
                answers = self._buttons(message, Action.ANSWER)
                if answers:
                    prices = prices_shown(
                        message.text or "", self.rooms, self.decimals, self.locale
                    )
                    return Asked(message, prices, answers)
                rather = self._buttons(message, Action.PREFER)
                if rather:
                    return Prompted(message, rather)
        for message in world.messages_in(self.group):
            if not message.from_bot or (message.chat.id, message.message_id) in mate.seen:
                continue
            agree, swap = self._button(message, Action.ACCEPT), self._button(message, Action.OBJECT)
            if agree and (swap or self._button(message, Action.END_ROUND)):
                return Proposed(message, agree, swap)
        return None

    # --- acting -------------------------------------------------------------------------------

    async def press(self, mate: Flatmate, message: SimMessage, data: str) -> None:
        """Tap a button and wait until the bot has answered the press (Bot API requires it)."""
        label = next(b.text for row in message.buttons() for b in row if b.callback_data == data)
        record = self.standin.world.user_presses(mate.user, message, data)
        if self.on_press is not None:
            self.on_press(mate, message, label)
        await self.standin.wait_for(lambda: record.answered, timeout=self.patience)

    async def join(self, mate: Flatmate, opened: SimMessage) -> None:
        """Tap the join button, then open the private chat through the group's link."""
        data = self._button(opened, Action.JOIN)
        if data is None:
            raise UnreadableMessage(f"no join button on {opened.text!r}")
        await self.press(mate, opened, data)
        links = [b.url for row in opened.buttons() for b in row if b.url]
        payload = start_payload(links[0]) if links else None
        if not mate.user.opened_private_chat:
            self.standin.world.user_opens_private_chat(mate.user, payload)

    async def give_rough_values(self, mate: Flatmate) -> bool:
        """Answer the private invitation to give rough values, if the mind wants to; a reply
        the bot could not use ("Not done: ...") is followed by another try."""
        if not mate.user.opened_private_chat:
            return False
        world = self.standin.world
        chat = world.private_chat_of(mate.user)

        def invited() -> SimMessage | None:
            return next(
                (
                    m
                    for m in world.messages_in(chat)
                    if m.from_bot and (m.text or "").startswith(ROUGH_INVITE_OPENING)
                ),
                None,
            )

        invitation = await self.standin.wait_for(invited, timeout=self.patience)
        mate.seen.add((invitation.chat.id, invitation.message_id))
        while True:
            text = await mate.mind.rough_values(mate.name, self.rooms)
            if text is None:
                return False
            said = world.user_says(mate.user, chat, text)

            def reply(after: int = said.message_id) -> SimMessage | None:
                return next(
                    (
                        m
                        for m in world.messages_in(chat)
                        if m.from_bot
                        and m.message_id > after
                        and (m.text or "").startswith(("Noted", "Not done"))
                    ),
                    None,
                )

            answer = await self.standin.wait_for(reply, timeout=self.patience)
            if (answer.text or "").startswith("Noted"):
                return True

    async def wait_for_join_button(self) -> SimMessage:
        """The newest group message that offers the join button."""
        world = self.standin.world

        def offered() -> SimMessage | None:
            for message in reversed(world.messages_in(self.group)):
                if message.from_bot and self._button(message, Action.JOIN):
                    return message
            return None

        return await self.standin.wait_for(offered, timeout=self.patience)

    async def _act(self, mate: Flatmate, step: Step) -> None:
        mate.seen.add((step.message.chat.id, step.message.message_id))
        if isinstance(step, Asked):
            room = await mate.mind.pick_room(mate.name, step)
            if room == CHANGE_LAST:
                mate.seen.discard((step.message.chat.id, step.message.message_id))
                await self._change_last(mate)
                return
            mate.answered += 1
            await self.press(mate, step.message, step.offered[room])
        elif isinstance(step, Proposed):
            mate.wants = await mate.mind.respond(mate.name, step)
            if step.swap is None:
                mate.wants = None  # objections are used up: agree (or leave it to the admin)
            swap = step.swap if mate.wants is not None else None
            await self.press(mate, step.message, swap or step.agree)
        else:
            wanted = mate.wants
            mate.wants = None
            if wanted not in step.offered:
                # The room named is not on offer (it is one's own): ask the mind again.
                prices = prices_shown(step.message.text or "", self.rooms, self.decimals)
                wanted = await mate.mind.pick_room(
                    mate.name, Asked(step.message, prices, step.offered)
                )
            await self.press(mate, step.message, step.offered[wanted])

    async def _change_last(self, mate: Flatmate) -> None:
        """Press "I meant another room" on the latest answer, then pick the room meant."""
        world = self.standin.world
        chat = world.private_chat_of(mate.user)
        wrong_room = button_label(Choice(Action.CHANGE_ANSWER, "_"), self.rooms)
        answered = [
            (m, b.callback_data)
            for m in world.messages_in(chat)
            for row in m.buttons()
            for b in row
            if m.from_bot and b.text == wrong_room and b.callback_data
        ]
        if not answered:
            return
        message, data = answered[-1]
        newest = world.messages_in(chat)[-1].message_id
        await self.press(mate, message, data)

        def prompt() -> SimMessage | None:
            return next(
                (
                    m
                    for m in world.messages_in(chat)
                    if m.message_id > newest and self._buttons(m, Action.CHANGE_TO)
                ),
                None,
            )

        asked = await self.standin.wait_for(prompt, timeout=self.patience)
        mate.seen.add((asked.chat.id, asked.message_id))
        offered = self._buttons(asked, Action.CHANGE_TO)
        prices = prices_shown(message.text or "", self.rooms, self.decimals, self.locale)
        room = await mate.mind.pick_room(mate.name, Asked(asked, prices, offered))
        if room in offered:
            await self.press(mate, asked, offered[room])

    async def _live(self, mate: Flatmate) -> None:
        def look() -> Step | Stopped | None:
            return STOPPED if self._stopped else self._next_step(mate)

        while True:
            step: Step | Stopped = await self.standin.wait_for(look, timeout=self.patience)
            if isinstance(step, Stopped):
                return
            await self._act(mate, step)

    async def live_until_stopped(self) -> None:
        """Every flatmate reads and answers on their own until :meth:`stop` is called."""
        self._stopped = False
        async with asyncio.TaskGroup() as tasks:
            for mate in self.flatmates:
                tasks.create_task(self._live(mate), name=f"flatmate-{mate.name}")

    async def take_turns(
        self,
        done: Callable[[], T | None],
        *,
        timeout: float = 60.0,
        before_each: Callable[[], Awaitable[None]] | None = None,
    ) -> T:
        """Flatmates act one at a time in a fixed order until ``done()`` returns something.

        Tests need repeatable runs: here the first flatmate (in household order) with
        something waiting acts, then everyone looks again. Between moves only the bot acts.
        ``before_each`` runs before every look (tests check invariants there).
        """

        def next_move() -> Finished[T] | tuple[Flatmate, Step] | None:
            finished = done()
            if finished is not None:
                return Finished(finished)
            for mate in self.flatmates:
                step = self._next_step(mate)
                if step is not None:
                    return mate, step
            return None

        while True:
            if before_each is not None:
                await before_each()
            move: Finished[T] | tuple[Flatmate, Step] = await self.standin.wait_for(
                next_move, timeout
            )
            if isinstance(move, Finished):
                return move.value
            mate, step = move
            await self._act(mate, step)

    def stop(self) -> None:
        """The round is over: every flatmate's task ends at its next look."""
        self._stopped = True
        self.standin.world.changed.notify()
