"""The guided set-up: /newround without arguments, then the bot asks for the rent and the rooms.

Privacy mode means the bot sees only commands, mentions and replies to its own messages in a
group, so each question is sent with ``ForceReply`` (selective: only the admin's client opens
the reply box) and only replies to the bot's own question count. No admin rights are needed.
Nothing is stored until both answers are in and valid; then it is one set-up action.
"""

from __future__ import annotations

from typing import Any

from telegram import ForceReply, Message, Update
from telegram.ext import BaseHandler, CommandHandler, ConversationHandler, MessageHandler, filters

from bot.adapter.handlers import GROUP_TYPES, new_round_with_arguments, set_up_round
from bot.adapter.runtime import AnyContext, runtime_of
from bot.rounds.errors import InvalidSetup
from bot.rounds.round_settings import check_rent, check_rooms
from bot.rounds.setup_input import RentInput, SetupInput, parse_rent, split_names

ASK_RENT, ASK_ROOMS = range(2)
#: Half-finished guided set-ups are forgotten after this many seconds.
GUIDED_TIMEOUT = 15 * 60
RENT_QUESTION = (
    "Let's set up a round. What is the total monthly rent, with its currency? "
    "Reply to this message, e.g. 1850.00 EUR"
)
ROOMS_QUESTION = (
    "Thanks. Now the rooms: reply with their names separated by commas, e.g. Loft, Attic, Bay room"
)


async def _ask(message: Message, text: str) -> None:
    await message.reply_text(
        text, reply_markup=ForceReply(selective=True, input_field_placeholder="Reply here")
    )


def _replying_to_us(update: Update, context: AnyContext) -> bool:
    message = update.effective_message
    original = message.reply_to_message if message is not None else None
    return (
        original is not None
        and original.from_user is not None
        and (original.from_user.id == context.bot.id)
    )


async def start(update: Update, context: AnyContext) -> int:
    message, chat = update.effective_message, update.effective_chat
    if message is None or chat is None:
        return ConversationHandler.END
    if chat.type not in GROUP_TYPES:
        await message.reply_text("Please send /newround in your flat's group chat.")
        return ConversationHandler.END
    if context.args:
        await new_round_with_arguments(update, context)
        return ConversationHandler.END
    await _ask(message, RENT_QUESTION)
    return ASK_RENT


async def got_rent(update: Update, context: AnyContext) -> int:
    message = update.effective_message
    if message is None or not _replying_to_us(update, context):
        return ASK_RENT
    try:
        locale = runtime_of(context).settings.locale
        rent = parse_rent(message.text or "", locale)
        check_rent(rent, None, locale)
    except InvalidSetup as bad:
        await _ask(message, f"Not quite: {bad}. Please reply with the rent again.")
        return ASK_RENT
    _draft(update, context)["rent"] = rent
    await _ask(message, ROOMS_QUESTION)
    return ASK_ROOMS


async def got_rooms(update: Update, context: AnyContext) -> int:
    message = update.effective_message
    if message is None or not _replying_to_us(update, context):
        return ASK_ROOMS
    try:
        rooms = check_rooms(split_names(message.text or ""))
    except InvalidSetup as bad:
        await _ask(message, f"Not quite: {bad}. Please reply with the rooms again.")
        return ASK_ROOMS
    rent = _draft(update, context).pop("rent", None)
    if not isinstance(rent, RentInput):  # the draft was lost (a restart): start again
        await _ask(message, RENT_QUESTION)
        return ASK_RENT
    locale = runtime_of(context).settings.locale
    await set_up_round(update, context, SetupInput(rent=rent, rooms=rooms, locale=locale))
    return ConversationHandler.END


def _draft(update: Update, context: AnyContext) -> dict[str, Any]:
    """The half-finished set-up of this admin in this group.

    Keyed by chat *and* user, like the conversation itself: PTB's ``user_data`` is one dict
    per user across all chats, so a draft kept there let a rent typed in one group land in
    another group's round when the same admin set up both at once.
    """
    chat, user = update.effective_chat, update.effective_user
    if context.chat_data is None or chat is None or user is None:  # pragma: no cover
        raise RuntimeError("a guided set-up reply without its chat or sender")
    drafts = context.chat_data.setdefault("guided_setup", {})
    assert isinstance(drafts, dict)
    found = drafts.setdefault(user.id, {})
    assert isinstance(found, dict)
    return found


def guided_setup_handler() -> BaseHandler[Update, Any, Any]:
    replies = filters.TEXT & filters.REPLY & ~filters.COMMAND
    return ConversationHandler(
        entry_points=[CommandHandler("newround", start)],
        states={
            ASK_RENT: [MessageHandler(replies, got_rent)],
            ASK_ROOMS: [MessageHandler(replies, got_rooms)],
        },
        fallbacks=[],
        allow_reentry=True,
        conversation_timeout=GUIDED_TIMEOUT,
        name="guided-setup",
    )
