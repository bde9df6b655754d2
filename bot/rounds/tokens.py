"""Button tokens: short, opaque, deterministic, and meaningful only to the database.

A token is a keyed BLAKE2b digest of what the button does (round, action, reference, room),
12 URL-safe characters, so it fits Telegram's 64-byte ``callback_data`` with any short prefix.
Deterministic tokens make re-issuing the same button idempotent; the key (a secret from the
bot's configuration) keeps them unguessable, and the engine still checks every press against
the database and the presser's role.
"""

from __future__ import annotations

import base64
import hashlib

from bot.rounds.messages import Action

TOKEN_LENGTH = 12
#: Telegram Bot API: callback_data is 1-64 bytes (core.telegram.org/bots/api#inlinekeyboardbutton).
CALLBACK_DATA_LIMIT = 64


def make_token(secret: bytes, round_id: int, action: Action, ref: str, room: int | None) -> str:
    """The token for one button; same inputs, same token."""
    message = f"{round_id}|{action.value}|{ref}|{'' if room is None else room}".encode()
    digest = hashlib.blake2b(message, key=secret, digest_size=9).digest()
    return base64.urlsafe_b64encode(digest).decode("ascii")
