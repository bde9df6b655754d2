"""The demo needs the Telegram Bot API spec that its stand-in checks every call against."""

from __future__ import annotations

import pytest

from bot.sandbox import BotApiSpec


@pytest.fixture(autouse=True)
def bot_api_spec(spec: BotApiSpec) -> BotApiSpec:
    """Skip when the spec (tests/conftest.py ``spec``) is absent."""
    return spec
