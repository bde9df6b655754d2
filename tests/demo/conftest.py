"""The demo needs the Telegram Bot API spec that its stand-in checks every call against."""

from __future__ import annotations

import pytest

from bot.sandbox import SpecNotFound, load_spec, spec_path


@pytest.fixture(autouse=True)
def bot_api_spec() -> None:
    """Skip when ../shared/telegram-bot-api/api.json (or $FLATPACT_BOT_API_SPEC) is absent."""
    try:
        load_spec()
    except SpecNotFound:
        pytest.skip(f"Bot API spec not found at {spec_path()}: set FLATPACT_BOT_API_SPEC")
