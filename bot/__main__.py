"""``python -m bot``: run Flatpact with the settings from ``FLATPACT_*`` variables or ``.env``.

A missing or malformed setting ends the program with one line on stderr and exit code 2
(the usual code for a usage error), never with a traceback.
"""

from __future__ import annotations

import logging
import sys

from pydantic import ValidationError

from bot import redaction
from bot.app import ALLOWED_UPDATES, WEBHOOK_PATH, build_application
from bot.config import Settings, describe_error

USAGE_ERROR = 2


def load_settings() -> Settings | None:
    try:
        return Settings()  # type: ignore[call-arg]  # values come from the environment
    except ValidationError as error:
        print(describe_error(error), file=sys.stderr)
        return None


def main() -> int:
    settings = load_settings()
    if settings is None:
        return USAGE_ERROR
    logging.basicConfig(
        level=settings.log_level, format="%(asctime)s %(levelname)s %(name)s: %(message)s"
    )
    redaction.install(redaction.secrets_of(settings))
    logging.getLogger("httpx").setLevel(logging.WARNING)
    app = build_application(settings)
    if settings.mode == "webhook":
        secret = settings.webhook_secret.get_secret_value() if settings.webhook_secret else None
        app.run_webhook(
            listen=settings.webhook_listen,
            port=settings.webhook_port,
            url_path=WEBHOOK_PATH,
            webhook_url=(settings.webhook_url or "").rstrip("/"),
            secret_token=secret,
            allowed_updates=ALLOWED_UPDATES,
        )
    else:
        app.run_polling(allowed_updates=ALLOWED_UPDATES)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
