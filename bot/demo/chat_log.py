"""The demo's running chat log: every chat of the stand-in's world, printed as it happens.

The reader should be able to follow the round as the flatmates lived it: who said what in
which chat, what the bot sent and with which buttons, who pressed what. The chat log watches
the world (never the bot's database) and prints, in order, new messages, presses and edits;
an edit shows only the lines that changed, so the group's progress line reads as a ticker.
"""

from __future__ import annotations

import asyncio
from dataclasses import dataclass, field

from rich.console import Console
from rich.text import Text

from bot.demo.flatmates import Flatmate
from bot.sandbox.models import SimChat, SimMessage
from bot.sandbox.world import World

#: Okabe & Ito's colour-blind-safe palette (as bot/adapter/pictures.py), one colour per flatmate.
PERSON_COLOURS = ("#E69F00", "#56B4E9", "#009E73", "#F0E442", "#CC79A7", "#D55E00")
BOT_STYLE = "bold #0072B2"


@dataclass
class ChatLog:
    """Prints what happens in the world's chats; call :meth:`catch_up` after changes."""

    console: Console
    world: World
    names: dict[int, str]
    _printed: int = 0
    _shown: dict[tuple[int, int], str] = field(default_factory=dict)

    def colour(self, user_id: int) -> str:
        ids = sorted(self.names)
        return PERSON_COLOURS[ids.index(user_id) % len(PERSON_COLOURS)] if user_id in ids else ""

    def where(self, message: SimMessage) -> Text:
        """``[group]`` or ``[Ines ⇄ bot]``: which chat a line belongs to."""
        chat = message.chat
        if chat.private_with is None:
            return Text("[group] ", style="bold")
        who = chat.private_with
        return Text(f"[{who.first_name} ⇄ bot] ", style=self.colour(who.id))

    def _speaker(self, message: SimMessage) -> Text:
        if message.from_bot:
            return Text("Flatpact: ", style=BOT_STYLE)
        return Text(
            f"{message.sender.first_name}: ", style=f"bold {self.colour(message.sender.id)}"
        )

    def _body(self, message: SimMessage) -> str:
        if message.photo is not None:
            size = len(message.photo.content)
            return f"(picture {message.photo.filename}, {size:,} bytes) {message.caption or ''}"
        if message.document is not None:
            size = len(message.document.content)
            return f"(file {message.document.filename}, {size:,} bytes) {message.caption or ''}"
        return message.text or ""

    def _buttons(self, message: SimMessage) -> str:
        labels = [f"[{b.text}{' ↗' if b.url else ''}]" for row in message.buttons() for b in row]
        return "   " + " ".join(labels) if labels else ""

    def _print_new(self, message: SimMessage) -> None:
        line = self.where(message) + self._speaker(message)
        body = self._body(message)
        first, *rest = body.split("\n")
        self.console.print(line + Text(first))
        for extra in rest:
            self.console.print("    " + extra, markup=False, highlight=False)
        buttons = self._buttons(message)
        if buttons:
            self.console.print(Text(buttons, style="dim"))
        self._shown[(message.chat.id, message.message_id)] = body

    def _print_edit(self, message: SimMessage, before: str) -> None:
        after = self._body(message)
        old = set(before.split("\n"))
        changed = [line for line in after.split("\n") if line not in old]
        self._shown[(message.chat.id, message.message_id)] = after
        if changed:
            text = " / ".join(changed)
            self.console.print(self.where(message) + Text(f"✎ {text}", style="dim"))

    def catch_up(self) -> None:
        """Print messages new since the last call, then edits of messages already shown."""
        messages = self.world.messages
        for message in messages[self._printed :]:
            self._print_new(message)
        self._printed = len(messages)
        for message in messages:
            key = (message.chat.id, message.message_id)
            before = self._shown.get(key)
            if before is not None and before != self._body(message):
                self._print_edit(message, before)

    def group_posts(self, group: SimChat) -> tuple[str, ...]:
        """The bot's new messages in the group, in order, each as its first line reads now
        (edits are not counted: a quiet group gets few new messages and many rewrites)."""
        return tuple(
            self._body(m).split("\n", 1)[0] for m in self.world.messages_in(group) if m.from_bot
        )

    def pressed(self, mate: Flatmate, message: SimMessage, label: str) -> None:
        """A press, printed when it happens (presses are not messages)."""
        self.catch_up()
        self.console.print(
            self.where(message)
            + Text(f"{mate.name} pressed ", style=self.colour(mate.user.id))
            + Text(f"[{label}]", style="bold")
        )

    async def follow(self, stop: asyncio.Event) -> None:
        """Keep printing until ``stop`` is set (wakes on every change in the world)."""
        while not stop.is_set():
            self.catch_up()
            await self.world.changed.wait(0.5)
        self.catch_up()
