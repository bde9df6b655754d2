"""A real telegram.ext.Application polls the stand-in and its handlers answer simulated people.

Outside reference: Telegram Bot API spec, bot/sandbox/botapi/api.json (every call the
Application makes, including getUpdates with its offset/timeout, is validated against it).
The flat and its people are invented.
"""

from __future__ import annotations

from collections.abc import AsyncIterator

import pytest
from telegram import InlineKeyboardButton, InlineKeyboardMarkup, Update
from telegram.ext import Application, CallbackQueryHandler, CommandHandler, ContextTypes

from bot.sandbox import BotApiStandIn

Context = ContextTypes.DEFAULT_TYPE


async def say_hello(update: Update, context: Context) -> None:
    assert update.effective_message is not None and update.effective_user is not None
    await update.effective_message.reply_text(
        f"Hello, {update.effective_user.first_name}!",
        reply_markup=InlineKeyboardMarkup([[InlineKeyboardButton("Ready", callback_data="ready")]]),
    )


async def note_ready(update: Update, context: Context) -> None:
    query = update.callback_query
    assert query is not None
    await query.answer("Noted")
    await query.edit_message_text(f"{query.from_user.first_name} is ready.")


@pytest.fixture
async def polling_app(standin: BotApiStandIn) -> AsyncIterator[Application]:
    app = (
        Application.builder()
        .token(standin.token)
        .base_url(standin.base_url)
        .base_file_url(standin.base_file_url)
        .build()
    )
    app.add_handler(CommandHandler("hello", say_hello))
    app.add_handler(CallbackQueryHandler(note_ready, pattern="^ready$"))
    async with app:
        await app.start()
        assert app.updater is not None
        await app.updater.start_polling(poll_interval=0.0, timeout=1)
        yield app
        await app.updater.stop()
        await app.stop()


async def test_command_handler_replies_to_hello_in_a_group(
    standin: BotApiStandIn,
    polling_app: Application,
) -> None:
    world = standin.world
    ines = world.add_user("Ines", "ines_q")
    group = world.add_group("7 Quince Row", [ines])
    world.user_says(ines, group, "/hello@flatpact_sandbox_bot")
    reply = await standin.wait_for(lambda: world.last_message_to(group), timeout=5)
    assert reply.text == "Hello, Ines!"
    assert reply.reply_to is not None and reply.reply_to.text == "/hello@flatpact_sandbox_bot"

    world.user_presses(ines, reply, "ready")
    await standin.wait_for(lambda: reply.text == "Ines is ready.", timeout=5)
    assert all(record.answered for record in world.callbacks.values())
    assert standin.violations == [] and standin.response_violations == []
    assert standin.calls_to("getUpdates")[0].get("timeout") == 1


async def test_commands_for_another_bot_do_not_reach_this_one(
    standin: BotApiStandIn,
    polling_app: Application,
) -> None:
    world = standin.world
    kwame = world.add_user("Kwame")
    group = world.add_group("7 Quince Row", [kwame])
    elsewhere = world.user_says(kwame, group, "/hello@some_other_bot")
    plain = world.user_says(kwame, group, "hello everyone")
    assert not elsewhere.delivered and not plain.delivered
    world.user_says(kwame, group, "/hello")
    reply = await standin.wait_for(lambda: world.last_message_to(group), timeout=5)
    assert reply.text == "Hello, Kwame!"
    assert len([m for m in world.messages_in(group) if m.from_bot]) == 1
