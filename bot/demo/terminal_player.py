"""``--play NAME``: you answer one flatmate's private questions at the terminal.

Input is read line by line from standard input, in a worker thread so the bot and the other
(simulated) flatmates carry on while you think; a pipe works as well as a keyboard. Each
prompt lists the rooms with numbers and prices; you type a number, or ``w`` ("I pressed the
wrong room in my last answer", which changes that answer). At the proposal you type ``a`` to
agree, or the number of the room you would rather have.
"""

from __future__ import annotations

import asyncio
import sys
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import TextIO

from rich.console import Console

from bot.adapter.texts import money
from bot.demo.flatmates import CHANGE_LAST, Asked, Proposed

AGREE = "a"
#: Typed instead of a room: "I pressed the wrong room in my last answer".
WRONG = "w"


class InputEnded(EOFError):
    """Standard input closed while the round still needed an answer."""


@dataclass
class TerminalPlayer:
    """A :class:`~bot.demo.flatmates.Mind` that asks the person at the terminal."""

    console: Console
    rooms: tuple[str, ...]
    currency: str
    decimals: int
    source: TextIO = field(default_factory=lambda: sys.stdin)
    before_prompt: Callable[[], None] | None = None

    async def _line(self, prompt: str) -> str:
        if self.before_prompt is not None:
            self.before_prompt()
        self.console.print(prompt, markup=False, highlight=False)
        line = await asyncio.to_thread(self.source.readline)
        if not line:
            raise InputEnded("standard input ended before the round did")
        self.console.print(f"> {line.strip()}", style="dim", highlight=False)
        return line.strip()

    def _price_table(self, prices: tuple[int, ...], offered: set[int]) -> list[str]:
        return [
            f"  {i + 1}) {room}: {money(prices[i], self.currency, self.decimals, 'en')}"
            + ("" if i in offered else " (not on offer)")
            for i, room in enumerate(self.rooms)
        ]

    async def pick_room(self, name: str, asked: Asked) -> int:
        lines = self._price_table(asked.prices, set(asked.offered))
        prompt = "\n".join(
            [f"Your turn, {name}. At these prices, which room would you take?", *lines]
        )
        hint = f" (or '{WRONG}' if you pressed the wrong room in your last answer)"
        while True:
            typed = await self._line(prompt + f"\nType a room number{hint}:")
            if typed.lower() == WRONG:
                return CHANGE_LAST
            room = _room_number(typed, self.rooms)
            if room in asked.offered:
                return room
            if room is None:
                self.console.print(
                    f"Type a room number from 1 to {len(self.rooms)}, or '{WRONG}'.", markup=False
                )
            else:
                self.console.print("That room is not on offer here; type one of the numbers shown.")

    async def rough_values(self, name: str, rooms: tuple[str, ...]) -> str | None:
        """Typed as a person would (any amount format); an empty line skips."""
        typed = await self._line(
            f"{name}, optional: roughly what is each room worth to you a month? Type the "
            f"amounts in this order, separated by commas ({', '.join(rooms)}), or press Enter "
            "to skip:"
        )
        return typed or None

    async def respond(self, name: str, proposed: Proposed) -> int | None:
        names = "\n".join(f"  {i + 1}) {room}" for i, room in enumerate(self.rooms))
        prompt = (
            f"{name}, the group has a suggested split (above). Type '{AGREE}' to agree, or the "
            f"number of the room you would rather have at those prices:\n{names}"
        )
        while True:
            typed = await self._line(prompt)
            if typed.lower() == AGREE:
                return None
            room = _room_number(typed, self.rooms)
            if room is not None:
                return room
            self.console.print(f"Type '{AGREE}' or a room number from 1 to {len(self.rooms)}.")


def _room_number(typed: str, rooms: tuple[str, ...]) -> int | None:
    """The room index for a typed number 1..n, or None."""
    return int(typed) - 1 if typed.isdigit() and 1 <= int(typed) <= len(rooms) else None
