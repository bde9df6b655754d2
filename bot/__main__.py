"""``python -m bot``: run Flatpact with the settings from ``FLATPACT_*`` variables or ``.env``.

A missing or malformed setting ends the program with one line on stderr and exit code 2
(the usual code for a usage error), never with a traceback. The database is opened and
migrated next, before the token is used against Telegram (:mod:`bot.adapter.database_check`):
a database that cannot work is one line too (exit 2; exit 1 when its server does not answer).
Log records pass a redacting filter (:mod:`bot.adapter.redaction`), files are created
private to the bot's user (umask 077), and webhook mode serves
:mod:`bot.adapter.guarded_webhook` instead of PTB's own endpoint.
"""

from __future__ import annotations

import asyncio
import logging
import os
import signal
import sys

from pydantic import ValidationError
from telegram.error import InvalidToken

from bot.adapter import redaction
from bot.adapter.application import ALLOWED_UPDATES, Webhook, build_application, running
from bot.adapter.database_check import database_problem
from bot.adapter.process_settings import Settings, describe_error
from bot.adapter.runtime import AnyApp

USAGE_ERROR = 2
#: umask for every file the bot creates: owner read/write only (0600 files, 0700 folders).
PRIVATE_FILES = 0o077


def load_settings() -> Settings | None:
    try:
        return Settings()  # type: ignore[call-arg]  # values come from the environment
    except ValidationError as error:
        print(describe_error(error), file=sys.stderr)
        return None


async def serve_webhook(app: AnyApp, hook: Webhook) -> None:
    """Serve the guarded webhook endpoint (:mod:`bot.adapter.guarded_webhook`) until SIGINT
    or SIGTERM."""
    stop = asyncio.Event()
    loop = asyncio.get_running_loop()
    for signum in (signal.SIGINT, signal.SIGTERM):
        loop.add_signal_handler(signum, stop.set)
    async with running(app, webhook=hook):
        await stop.wait()


def main() -> int:
    settings = load_settings()
    if settings is None:
        return USAGE_ERROR
    # Files the bot creates (the SQLite database and its journals) are for its user alone.
    os.umask(PRIVATE_FILES)
    problem = asyncio.run(database_problem(settings.database))
    if problem is not None:
        print(problem.line, file=sys.stderr)
        return problem.exit_code
    logging.basicConfig(
        level=settings.log_level, format="%(asctime)s %(levelname)s %(name)s: %(message)s"
    )
    redaction.install(redaction.secrets_of(settings))
    logging.getLogger("httpx").setLevel(logging.WARNING)
    app = build_application(settings)
    try:
        if settings.mode == "webhook":
            secret = settings.webhook_secret.get_secret_value() if settings.webhook_secret else None
            url = (settings.webhook_url or "").rstrip("/")
            hook = Webhook(settings.webhook_listen, settings.webhook_port, url, secret)
            asyncio.run(serve_webhook(app, hook))
        else:
            app.run_polling(allowed_updates=ALLOWED_UPDATES)
    except InvalidToken:
        print(
            "flatpact: Telegram refused FLATPACT_BOT_TOKEN; copy it again from @BotFather",
            file=sys.stderr,
        )
        return USAGE_ERROR
    except Exception:
        # Through logging, so the redacting filter sees the traceback (PTB's errors can quote
        # the token); Python's own last-resort printer would write it as it is.
        logging.getLogger("bot").critical("the bot stopped on an error", exc_info=True)
        return 1
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
