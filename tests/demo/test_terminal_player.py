"""The ``--play`` prompt's replies to what a person types (the demo's own wording)."""

from __future__ import annotations

import asyncio
import io

from rich.console import Console

from bot.demo.flatmates import Asked
from bot.demo.terminal_player import TerminalPlayer
from bot.sandbox.models import SimChat, SimMessage, SimUser

ROOMS = ("Bay window", "Box room", "Loft")


def _asked(offered: dict[int, str]) -> Asked:
    ines = SimUser(id=1, first_name="Ines")
    chat = SimChat(id=1, type="private", private_with=ines)
    message = SimMessage(chat=chat, message_id=1, date=0, sender=ines)
    return Asked(message=message, prices=(90_000, 50_000, 70_000), offered=offered)


def _play(typed: str, offered: dict[int, str]) -> tuple[int, str]:
    out = io.StringIO()
    player = TerminalPlayer(
        Console(file=out, width=120), ROOMS, "EUR", 2, source=io.StringIO(typed)
    )
    room = asyncio.run(player.pick_room("Ines", _asked(offered)))
    return room, out.getvalue()


def test_words_and_numbers_out_of_range_are_told_the_range_and_the_wrong_room_key() -> None:
    room, shown = _play("abc\n9\n2\n", {0: "a", 1: "b", 2: "c"})
    assert room == 1
    assert shown.count("Type a room number from 1 to 3, or 'w'.") == 2
    assert "not on offer" not in shown.replace("(not on offer)", "")


def test_a_room_shown_but_not_on_offer_is_named_as_such() -> None:
    room, shown = _play("1\n3\n", {1: "b", 2: "c"})
    assert room == 2
    assert "That room is not on offer here" in shown
    assert "from 1 to 3" not in shown
