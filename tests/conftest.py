"""Shared test settings and the Bot API spec fixture.

Hypothesis runs without per-example deadlines (CI machines are slow). The ``spec`` fixture is
the outside reference for everything Telegram: the official Bot API spec in
``../shared/telegram-bot-api/api.json`` (or ``$FLATPACT_BOT_API_SPEC``); tests that need it
skip with a clear reason where the file is absent.
"""

import pytest
from hypothesis import HealthCheck, settings

from bot.sandbox import BotApiSpec, SpecNotFound, load_spec, spec_path

settings.register_profile(
    "flatpact", deadline=None, suppress_health_check=[HealthCheck.too_slow], print_blob=True
)
settings.load_profile("flatpact")


@pytest.fixture(scope="session")
def spec() -> BotApiSpec:
    """Telegram Bot API spec, ../shared/telegram-bot-api/api.json (or $FLATPACT_BOT_API_SPEC)."""
    try:
        return load_spec()
    except SpecNotFound:
        pytest.skip(f"Bot API spec not found at {spec_path()}: set FLATPACT_BOT_API_SPEC")
