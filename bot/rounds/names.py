"""Names people type or bring from Telegram, made safe to show in tables and messages.

A room name goes into Markdown and HTML tables, price lists and buttons. A carriage return
splits a table row (the price lands in the wrong column); a right-to-left override (U+202E)
turns the rest of a line around, so "Loft 400" can read as a different price; a zero-width
space (U+200B) makes two names that look the same differ. Room names are typed on purpose by
the admin, so such characters are refused with a message that names the character.

People's names come from Telegram profiles, which the bot cannot send back for correction:
they are tidied instead. Every kind of whitespace (tabs, line breaks, no-break spaces)
becomes one space, runs of spaces shrink to one, and control and formatting characters go;
the zero-width joiner and non-joiner stay, because emoji sequences and some scripts (Persian,
for one) need them and they neither move text nor break rows.

Unicode categories: Cc control, Cf format (every bidirectional control, U+200B..U+200F,
U+2060.., U+FEFF), Zl/Zp line and paragraph separators, Cs surrogates, Co private use
(Unicode Standard, chapter 4 and UAX #9 for the bidirectional controls).
"""

from __future__ import annotations

import re
import unicodedata

from bot.rounds.errors import InvalidSetup

#: Categories never allowed in a room name.
REFUSED_IN_ROOMS = frozenset({"Cc", "Cf", "Zl", "Zp", "Cs", "Co"})
#: Categories dropped from people's names (after whitespace has become spaces).
DROPPED_FROM_PEOPLE = frozenset({"Cc", "Cf", "Zl", "Zp", "Cs"})
#: Format characters that joined scripts and emoji sequences need (kept in people's names).
JOINERS = frozenset({"\u200c", "\u200d"})
_SPACES = re.compile(r" {2,}")


def room_name(text: str) -> str:
    """``text`` as a room name: spaces tidied, or InvalidSetup naming the refused character."""
    for char in text:
        if unicodedata.category(char) in REFUSED_IN_ROOMS:
            raise InvalidSetup(
                f"room name {_visible(text)!r} contains an invisible control, formatting or "
                f"text-direction character ({_code(char)}); type the name again without it"
            )
    return _single_spaces(text)


def person_name(text: str) -> str:
    """A Telegram name fit for one line of a table: single spaces, no invisible controls."""
    kept = []
    for char in text:
        if char.isspace():
            kept.append(" ")
        elif char in JOINERS or unicodedata.category(char) not in DROPPED_FROM_PEOPLE:
            kept.append(char)
    return _single_spaces("".join(kept))


def _single_spaces(text: str) -> str:
    spaced = "".join(" " if unicodedata.category(c) == "Zs" else c for c in text)
    return _SPACES.sub(" ", spaced).strip()


def _code(char: str) -> str:
    return f"U+{ord(char):04X}"


def _visible(text: str) -> str:
    """The name with each refused character written as its code, so the message is one line."""
    return "".join(
        f"<{_code(c)}>" if unicodedata.category(c) in REFUSED_IN_ROOMS else c for c in text
    )
