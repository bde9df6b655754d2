"""A picture that cannot be made never stops the proposal: send_walk_picture never raises."""

from __future__ import annotations

import logging
from contextlib import asynccontextmanager
from typing import Any, NoReturn

import pytest
from telegram import Bot

from bot.adapter.walk_picture import send_walk_picture
from bot.rounds.clock import ManualClock
from bot.rounds.context import EngineConfig
from bot.rounds.engine import Engine


class BrokenStore:
    """A fake store whose every transaction fails, as a lost database connection would."""

    @asynccontextmanager
    async def transaction(self) -> Any:
        raise OSError("database went away")
        yield  # pragma: no cover

    async def close(self) -> None:
        return None


class NoPhotoBot(Bot):
    """A bot that must not get as far as sending (the walk could not be read)."""

    async def send_photo(self, *args: Any, **kwargs: Any) -> NoReturn:  # type: ignore[override]
        raise AssertionError("no photo may be sent when the walk cannot be read")


async def test_failure_is_logged_and_swallowed(caplog: pytest.LogCaptureFixture) -> None:
    bot = NoPhotoBot("7000000001:sandbox-token-for-local-tests")
    with caplog.at_level(logging.ERROR, logger="bot.adapter.walk_picture"):
        engine = Engine(BrokenStore(), clock=ManualClock(0), config=EngineConfig(b"k" * 32))  # type: ignore[arg-type]
        sent = await send_walk_picture(bot, engine, -4_100_000_001, 1)
    assert sent is None
    assert "the proposal stands" in caplog.text
