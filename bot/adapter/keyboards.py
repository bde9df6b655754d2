"""Buttons and links: compact callback data carrying only engine tokens, and start deep links.

Both are checked when they are built, so a button Telegram would refuse never reaches it.
"""

from __future__ import annotations

import re

from telegram import InlineKeyboardButton, InlineKeyboardMarkup

from bot.rounds.errors import FlatpactError
from bot.rounds.messages import Action, Choice, DivisionFacts, Outgoing

#: Telegram Bot API, InlineKeyboardButton.callback_data: 1-64 bytes
#: (core.telegram.org/bots/api#inlinekeyboardbutton).
CALLBACK_DATA_LIMIT = 64
#: Our prefix: "fp" for Flatpact, "1" for the format version.
CALLBACK_PREFIX = "fp1:"
_TOKEN = re.compile(r"^[A-Za-z0-9_-]{1,48}$")
#: Telegram deep linking: the start parameter is up to 64 characters of A-Z, a-z, 0-9, _ and -
#: (core.telegram.org/bots/features#deep-linking).
_START_PAYLOAD = re.compile(r"^[A-Za-z0-9_-]{1,64}$")
_JOIN_PAYLOAD = re.compile(r"^round_(?P<sign>[mp])(?P<digits>\d{1,19})$")
#: Telegram Bot API, InlineKeyboardButton.text has no documented limit; keep labels short
#: so they fit a phone screen (common practice).
LABEL_LIMIT = 40


class BadButton(FlatpactError):
    """A button or link that would break Telegram's rules; a bug in our code, never a user's."""


def callback_data(token: str) -> str:
    """``fp1:<token>``; refuses anything that is not a short token or exceeds 64 bytes."""
    if not _TOKEN.match(token):
        raise BadButton(f"button token {token!r} is not a short URL-safe token")
    data = CALLBACK_PREFIX + token
    if len(data.encode("utf-8")) > CALLBACK_DATA_LIMIT:
        raise BadButton(f"callback data {data!r} is longer than {CALLBACK_DATA_LIMIT} bytes")
    return data


def token_of(data: str | None) -> str | None:
    """The token inside our callback data, or None for anything that is not ours."""
    if data is None or not data.startswith(CALLBACK_PREFIX):
        return None
    token = data.removeprefix(CALLBACK_PREFIX)
    return token if _TOKEN.match(token) else None


def join_payload(group_id: int) -> str:
    """The start parameter that says "I came from this group's round"."""
    return f"round_{'m' if group_id < 0 else 'p'}{abs(group_id)}"


def group_of_payload(payload: str) -> int | None:
    """The group id inside a start parameter we made, or None."""
    match = _JOIN_PAYLOAD.match(payload)
    if match is None:
        return None
    digits = int(match.group("digits"))
    return -digits if match.group("sign") == "m" else digits


def deep_link(bot_username: str, payload: str) -> str:
    """``https://t.me/<bot>?start=<payload>``, with the payload checked against Telegram's rules."""
    if not _START_PAYLOAD.match(payload):
        raise BadButton(f"start payload {payload!r} breaks Telegram's deep-link rules")
    return f"https://t.me/{bot_username}?start={payload}"


def button_label(choice: Choice, rooms: tuple[str, ...]) -> str:
    """Our own words for each kind of button."""
    room = rooms[choice.room] if choice.room is not None and choice.room < len(rooms) else ""
    label = {
        Action.JOIN: "Count me in",
        Action.ANSWER: f"I'd take {room}",
        Action.ACCEPT: "Agree",
        Action.OBJECT: "I'd rather swap",
        Action.PREFER: f"Rather {room}",
        Action.KEEP_EARLIER: "They still describe me: reuse",
        Action.ANSWER_AFRESH: "Ask me afresh",
        Action.CHANGE_ANSWER: "I meant another room"
        if choice.room is None
        else f"Change answer {choice.room + 1}",
        Action.CHANGE_TO: f"Make it {room}",
        Action.KEEP_ANSWER: "My earlier answer was right",
        Action.END_ROUND: "End the round (admin)",
    }[choice.action]
    return label if len(label) <= LABEL_LIMIT else label[: LABEL_LIMIT - 1] + "…"


def keyboard(
    message: Outgoing, rooms: tuple[str, ...], link: str | None = None
) -> InlineKeyboardMarkup | None:
    """One button per choice (answers one per row), plus an optional private-chat link."""
    rows = [
        [InlineKeyboardButton(button_label(c, rooms), callback_data=callback_data(c.token))]
        for c in message.choices
    ]
    if link is not None:
        rows.append([InlineKeyboardButton("Open a private chat with me", url=link)])
    return InlineKeyboardMarkup(rows) if rows else None


def rooms_of(message: Outgoing) -> tuple[str, ...]:
    """The room names a message's buttons may name, in room order."""
    rooms = getattr(message.facts, "rooms", None)
    if isinstance(rooms, tuple):
        return tuple(str(r) for r in rooms)
    if isinstance(message.facts, DivisionFacts):
        return tuple(line.room for line in sorted(message.facts.lines, key=lambda x: x.room_index))
    return ()
