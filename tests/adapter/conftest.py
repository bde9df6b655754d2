"""Fixtures for the adapter tests: a stand-in Bot API on loopback and Flatpact's settings for it."""

from __future__ import annotations

from collections.abc import AsyncIterator
from pathlib import Path

import pytest

from bot.sandbox import BotApiSpec, BotApiStandIn


@pytest.fixture
async def standin(spec: BotApiSpec) -> AsyncIterator[BotApiStandIn]:
    async with BotApiStandIn(spec=spec) as running:
        yield running
        # Outside reference: every call the bot made was checked against the Bot API spec.
        assert running.violations == []
        assert running.response_violations == []
        assert running.unimplemented == []


@pytest.fixture
def db_path(tmp_path: Path) -> Path:
    return tmp_path / "flatpact.sqlite3"
