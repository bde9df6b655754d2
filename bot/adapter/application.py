"""The application factory: a configured PTB ``Application`` for Flatpact.

``python -m bot`` uses it with the real Telegram; tests and the benchmark use it with the local
stand-in's ``base_url``. :func:`running` starts and stops an application the way
``run_polling`` does (including ``post_init``), for use inside an existing event loop.
"""

from __future__ import annotations

import logging
from collections.abc import AsyncIterator
from contextlib import asynccontextmanager
from dataclasses import dataclass
from typing import Any

from telegram import BotCommand, Update
from telegram.ext import (
    Application,
    CallbackQueryHandler,
    CommandHandler,
    MessageHandler,
    filters,
)

from bot.adapter import guarded_webhook, handlers
from bot.adapter.delivery import Delivery
from bot.adapter.group_pace import GroupPacedRateLimiter
from bot.adapter.guided_setup import guided_setup_handler
from bot.adapter.keyboards import CALLBACK_PREFIX
from bot.adapter.process_settings import Settings
from bot.adapter.runtime import (
    RUNTIME_KEY,
    AnyApp,
    Runtime,
    retention_job,
    retry_outbox_job,
    runtime_of,
)
from bot.adapter.texts import COMMANDS
from bot.adapter.update_order import OnePerChat
from bot.rounds.clock import Clock, system_clock
from bot.rounds.engine import Engine
from bot.storage.open_store import open_store

log = logging.getLogger(__name__)
#: Flood control: retry a 429 this many times, waiting retry_after each time.
FLOOD_RETRIES = 3
ALLOWED_UPDATES = [Update.MESSAGE, Update.CALLBACK_QUERY]
#: Seconds between two runs of the retention policy (bot/rounds/retention.py): a day.
RETENTION_EVERY = 24 * 3600
#: The path of the webhook endpoint (behind the reverse proxy: https://<host>/telegram).
WEBHOOK_PATH = "telegram"


def build_application(settings: Settings, *, clock: Clock = system_clock) -> AnyApp:
    """The Application with handlers, rate limiter and job queue; storage opens in post_init."""
    builder = (
        Application.builder()
        .token(settings.bot_token.get_secret_value())
        .rate_limiter(
            GroupPacedRateLimiter(
                max(1, int(settings.group_messages_per_minute)), max_retries=FLOOD_RETRIES
            )
        )
        .concurrent_updates(OnePerChat())
        .post_init(_post_init)
        .post_stop(_post_stop)
        .post_shutdown(_post_shutdown)
    )
    if settings.base_url:
        builder = builder.base_url(settings.base_url)
    if settings.base_file_url:
        builder = builder.base_file_url(settings.base_file_url)
    app: AnyApp = builder.build()
    app.bot_data["settings"] = settings
    app.bot_data["clock"] = clock
    _add_handlers(app)
    return app


def _add_handlers(app: AnyApp) -> None:
    command = CommandHandler
    app.add_handler(guided_setup_handler())
    app.add_handler(command("start", handlers.start_private))
    app.add_handler(command("help", handlers.show_help))
    app.add_handler(command("begin", handlers.begin))
    app.add_handler(command("status", handlers.status))
    app.add_handler(command("leave", handlers.leave))
    app.add_handler(command("myanswers", handlers.my_answers))
    app.add_handler(command("cancelround", handlers.cancel_round))
    app.add_handler(command("nextround", handlers.next_round))
    app.add_handler(command("again", handlers.run_again))
    app.add_handler(command("adjust", handlers.adjust))
    app.add_handler(command("changeover", handlers.changeover))
    app.add_handler(command("agreements", handlers.agreements))
    app.add_handler(command("newrent", handlers.new_rent))
    app.add_handler(CallbackQueryHandler(handlers.press, pattern=f"^{CALLBACK_PREFIX}"))
    app.add_handler(CallbackQueryHandler(handlers.unknown_button))
    app.add_handler(MessageHandler(filters.StatusUpdate.MIGRATE, handlers.group_migrated))
    app.add_handler(
        MessageHandler(
            filters.ChatType.PRIVATE & filters.TEXT & ~filters.COMMAND, handlers.private_text
        )
    )
    app.add_error_handler(_log_error)


async def _post_init(app: AnyApp) -> None:
    """Open storage, register commands, rebuild timers and send what a stop left unsent."""
    settings: Settings = app.bot_data["settings"]
    clock: Clock = app.bot_data["clock"]
    store = await open_store(settings.database, clock=clock)
    engine = Engine(store, clock=clock, config=settings.engine_config())
    delivery = Delivery(
        app.bot,
        store,
        engine,
        clock,
        settings.locale,
        app.bot.username or "flatpact_bot",
        board_edit_every=settings.board_edit_every,
    )
    runtime = Runtime(settings, store, engine, delivery, clock, app.job_queue)
    delivery.on_paused = runtime.retry_soon
    app.bot_data[RUNTIME_KEY] = runtime
    await app.bot.set_my_commands([BotCommand(name, text) for name, text in COMMANDS])
    await runtime.schedule_timers()
    if app.job_queue is not None:
        app.job_queue.run_repeating(
            retry_outbox_job, interval=settings.retry_every, name="flatpact-outbox"
        )
        # Once a day, the first a minute after start-up (not in the way of catching up).
        app.job_queue.run_repeating(
            retention_job, interval=RETENTION_EVERY, first=60, name="flatpact-retention"
        )
    await delivery.send_soon()


async def _post_stop(app: AnyApp) -> None:
    """Let sending finish (a few seconds at most) while the bot can still talk to Telegram."""
    runtime = app.bot_data.get(RUNTIME_KEY)
    if isinstance(runtime, Runtime):
        await runtime.delivery.close()


async def _post_shutdown(app: AnyApp) -> None:
    runtime = app.bot_data.pop(RUNTIME_KEY, None)
    if isinstance(runtime, Runtime):
        await runtime.store.close()


async def _log_error(update: object, context: Any) -> None:
    log.error("an update could not be handled", exc_info=context.error)
    if isinstance(update, Update) and update.callback_query is not None:
        try:
            await update.callback_query.answer("Something went wrong on my side; please try again.")
        except Exception:
            log.debug("could not answer the failed button press")


@dataclass(frozen=True, slots=True)
class Webhook:
    """Where this process listens for updates Telegram POSTs, and the secret it checks."""

    listen: str
    port: int
    url: str
    secret: str | None


@asynccontextmanager
async def running(
    app: AnyApp, *, poll_timeout: int = 1, webhook: Webhook | None = None
) -> AsyncIterator[AnyApp]:
    """Initialise, post_init, start polling (or the webhook); on exit stop it all.

    The same steps as PTB's ``run_polling`` / ``run_webhook``, inside an event loop the caller
    owns (tests, the demo). With ``webhook``, :mod:`bot.adapter.guarded_webhook` serves the
    endpoint: a request whose ``X-Telegram-Bot-Api-Secret-Token`` header is wrong or missing
    gets 403.
    """
    await app.initialize()
    try:
        if app.post_init is not None:
            await app.post_init(app)
        await app.start()
        assert app.updater is not None
        endpoint = None
        if webhook is None:
            await app.updater.start_polling(
                poll_interval=0.0, timeout=poll_timeout, allowed_updates=ALLOWED_UPDATES
            )
        else:
            endpoint = await guarded_webhook.start(
                app,
                listen=webhook.listen,
                port=webhook.port,
                path=WEBHOOK_PATH,
                url=webhook.url,
                secret=webhook.secret,
                allowed_updates=ALLOWED_UPDATES,
            )
        try:
            yield app
        finally:
            await (app.updater.stop() if endpoint is None else endpoint.stop())
            await app.stop()
            if app.post_stop is not None:
                await app.post_stop(app)
    finally:
        await app.shutdown()
        if app.post_shutdown is not None:
            await app.post_shutdown(app)


__all__ = [
    "ALLOWED_UPDATES",
    "WEBHOOK_PATH",
    "Webhook",
    "build_application",
    "running",
    "runtime_of",
]
