"""Rewriting a message the bot already posted (Telegram ``editMessageText``).

A quiet group chat rests on edits: the live status, the proposal's agreement count, answered
questions. Two of Telegram's answers are not failures here: "message is not modified" (the
text was already current) and "message to edit not found" (someone deleted it; the caller
then posts anew).
"""

from __future__ import annotations

from telegram import Bot, InlineKeyboardMarkup, Message
from telegram.error import BadRequest

from bot.adapter.texts import fit

NOT_MODIFIED = "message is not modified"


async def edit_text(
    bot: Bot, chat_id: int, message_id: int, text: str, markup: InlineKeyboardMarkup | None
) -> int | None:
    """Edit text (and keyboard); "not modified" counts as done, a vanished message as None."""
    try:
        edited = await bot.edit_message_text(
            fit(text), chat_id=chat_id, message_id=message_id, reply_markup=markup
        )
    except BadRequest as bad:
        if NOT_MODIFIED in str(bad):
            return message_id
        if "not found" in str(bad):
            return None
        raise
    return edited.message_id if isinstance(edited, Message) else message_id
