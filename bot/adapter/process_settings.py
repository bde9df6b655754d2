"""The bot's own settings, from ``FLATPACT_*`` environment variables or a ``.env`` file.

Validated once at start-up by pydantic-settings, so a missing or malformed value stops the
bot with one line saying what to set, instead of failing on the first message hours later.
"""

from __future__ import annotations

import hashlib
import re
from typing import Any, Literal

from babel import Locale, UnknownLocaleError
from pydantic import Field, SecretStr, field_validator, model_validator
from pydantic_settings import BaseSettings, SettingsConfigDict

from bot.rounds.context import EngineConfig

#: Shape of a token from @BotFather: "<bot id>:<secret>" (from memory: the secret is 35
#: characters of A-Z a-z 0-9 _ -; we accept 20 or more so local stand-in tokens fit too).
TOKEN_PATTERN = re.compile(r"^\d{1,20}:[A-Za-z0-9_-]{20,}$")
#: Telegram Bot API setWebhook: secret_token is 1-256 characters of A-Z a-z 0-9 _ -
#: (core.telegram.org/bots/api#setwebhook).
WEBHOOK_SECRET_PATTERN = re.compile(r"^[A-Za-z0-9_-]{1,256}$")


class Settings(BaseSettings):
    """Everything needed to run one bot; see the README for each ``FLATPACT_`` variable."""

    model_config = SettingsConfigDict(
        env_prefix="FLATPACT_", env_file=".env", env_file_encoding="utf-8", extra="ignore"
    )

    bot_token: SecretStr = Field(description="the bot token from @BotFather")
    #: a SQLite file path, or a ``postgresql://`` address for several bot processes
    database: str = "flatpact.sqlite3"
    mode: Literal["polling", "webhook"] = "polling"
    webhook_listen: str = "127.0.0.1"
    webhook_port: int = Field(default=8443, ge=1, le=65535)
    #: the public https:// address Telegram posts updates to, ending in /telegram
    webhook_url: str | None = None
    webhook_secret: SecretStr | None = None
    log_level: Literal["DEBUG", "INFO", "WARNING", "ERROR"] = "INFO"
    base_url: str | None = None
    base_file_url: str | None = None
    locale: str = "en"
    #: Messages and edits per group in any one minute: about 20 is Telegram's common-practice
    #: group limit (Bot FAQ; from memory), see bot/adapter/group_pace.py. Tests raise it.
    group_messages_per_minute: float = Field(default=20, gt=0)
    #: Seconds between retries of messages that could not be sent (network trouble).
    retry_every: float = Field(default=30, gt=0)
    #: Seconds between two edits of a group's progress message (coalesced, latest state last).
    board_edit_every: float = Field(default=3, ge=0)
    button_secret: SecretStr | None = None
    #: Only the group chat's admins may start rounds (else any member may, and runs it).
    only_admins_start: bool = False
    #: Retention (bot/rounds/retention.py): days a finished round's private answers are
    #: kept, and days processed update ids and sent messages are kept. Agreements stay.
    keep_answers_days: int = Field(default=60, ge=1)
    keep_log_days: int = Field(default=30, ge=1)

    @field_validator("mode", mode="before")
    @classmethod
    def _mode_known(cls, value: Any) -> Any:
        if isinstance(value, str) and value.strip().lower() in ("polling", "webhook"):
            return value.strip().lower()
        raise ValueError(f"FLATPACT_MODE={value!s} is not a mode; write polling or webhook")

    @field_validator("log_level", mode="before")
    @classmethod
    def _level_known(cls, value: Any) -> Any:
        levels = ("DEBUG", "INFO", "WARNING", "ERROR")
        if isinstance(value, str) and value.strip().upper() in levels:
            return value.strip().upper()
        raise ValueError(
            f"FLATPACT_LOG_LEVEL={value!s} is not a log level; write one of "
            "DEBUG, INFO, WARNING or ERROR (any case)"
        )

    @field_validator("webhook_port", mode="before")
    @classmethod
    def _port_in_range(cls, value: Any) -> Any:
        text = str(value).strip()
        if text.isdigit() and 1 <= int(text) <= 65535:
            return int(text)
        raise ValueError(
            f"FLATPACT_WEBHOOK_PORT={value!s} is not a port; write a whole number from 1 to 65535"
        )

    @field_validator("locale")
    @classmethod
    def _locale_known(cls, value: str) -> str:
        # Babel parses the locale again wherever amounts are read or written; checking it
        # here turns a failure on every /newround into one line at start-up.
        try:
            Locale.parse(value)
        except (UnknownLocaleError, ValueError, TypeError):
            raise ValueError(
                f"FLATPACT_LOCALE={value} is not a locale Babel knows; write a language code "
                "such as en, de or en_GB (underscore, not hyphen)"
            ) from None
        return value

    @field_validator("bot_token")
    @classmethod
    def _token_shape(cls, value: SecretStr) -> SecretStr:
        if not TOKEN_PATTERN.match(value.get_secret_value()):
            raise ValueError(
                "FLATPACT_BOT_TOKEN does not look like a bot token ('<digits>:<secret>'); "
                "copy it again from @BotFather"
            )
        return value

    @model_validator(mode="after")
    def _webhook_needs_url(self) -> Settings:
        if self.mode == "webhook":
            url = self.webhook_url or ""
            if not url.startswith("https://") or not url.rstrip("/").endswith("/telegram"):
                raise ValueError(
                    "webhook mode needs FLATPACT_WEBHOOK_URL: https://<your host>/telegram"
                )
            secret = self.webhook_secret.get_secret_value() if self.webhook_secret else ""
            if not WEBHOOK_SECRET_PATTERN.match(secret):
                raise ValueError(
                    "webhook mode needs FLATPACT_WEBHOOK_SECRET: 1-256 characters of "
                    "A-Z, a-z, 0-9, _ and -"
                )
        return self

    def engine_config(self) -> EngineConfig:
        """The engine's knobs that come from these settings."""
        return EngineConfig(
            token_secret=self.token_secret(),
            only_admins_start=self.only_admins_start,
            keep_answers_days=self.keep_answers_days,
            keep_log_days=self.keep_log_days,
        )

    def token_secret(self) -> bytes:
        """The key for button tokens: the configured one, else derived from the bot token."""
        if self.button_secret is not None:
            return self.button_secret.get_secret_value().encode()
        token = self.bot_token.get_secret_value().encode()
        return hashlib.blake2b(token, person=b"flatpact-button").digest()


def describe_error(error: Exception) -> str:
    """One line for stderr: which setting is wrong and what to do, never a traceback."""
    errors = getattr(error, "errors", None)
    if callable(errors):
        parts = []
        for item in errors():
            where = ".".join(str(p) for p in item.get("loc", ())) or "settings"
            name = f"FLATPACT_{where.upper()}" if where != "settings" else "settings"
            message = str(item.get("msg", "invalid")).removeprefix("Value error, ")
            if item.get("type") == "missing":
                message = "is not set; put it in the environment or in .env"
            named = name in message or (name == "settings" and "FLATPACT_" in message)
            parts.append(message if named else f"{name}: {message}")
        return "flatpact: " + "; ".join(parts)
    return f"flatpact: {error}"
