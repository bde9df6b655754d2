"""Buttons offered to people: what a press means is stored, the button carries only a token.

Every handler that offers a choice (a room, agree, join, keep earlier answers) goes through
:func:`issue_choice`, so the meaning of every button is in the database before the message
that shows it is sent, and a press can be checked against it (:mod:`bot.rounds.tokens`).
"""

from __future__ import annotations

from bot.rounds.context import Context
from bot.rounds.messages import Action, Choice
from bot.rounds.records import TokenRecord
from bot.rounds.tokens import make_token


async def issue_choice(
    ctx: Context, round_id: int, action: Action, ref: str, room: int | None = None
) -> Choice:
    """Store a button's meaning and return it with its token."""
    token = make_token(ctx.config.token_secret, round_id, action, ref, room)
    await ctx.tx.put_token(TokenRecord(token, round_id, action, ref, room))
    return Choice(action, token, room)
