"""Flatpact's settings for a bot that talks to the local stand-in instead of Telegram.

One place for what the demo, the adapter tests and the adapter benchmark all need: the
stand-in's token and addresses, a given database, no ``.env`` file, and a group rate far
above Telegram's real group limit (about 20 messages a minute, from memory) so nothing waits.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from bot.adapter.process_settings import Settings
from bot.sandbox.server import BotApiStandIn


def settings_for(standin: BotApiStandIn, database: Path | str, **extra: Any) -> Settings:
    """Settings pointing the bot at ``standin``; ``extra`` overrides any field."""
    fields: dict[str, Any] = {
        "bot_token": standin.token,
        "database": str(database),
        "base_url": standin.base_url,
        "base_file_url": standin.base_file_url,
        "group_messages_per_minute": 6000,
        "retry_every": 0.5,
        **extra,
    }
    return Settings(_env_file=None, **fields)  # type: ignore[call-arg]
