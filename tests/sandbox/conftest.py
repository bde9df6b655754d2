"""Fixtures for the Bot API stand-in: the spec, a running stand-in and a real PTB Bot on it."""

from __future__ import annotations

from collections.abc import AsyncIterator

import pytest
from telegram import Bot

from bot.sandbox import BotApiSpec, BotApiStandIn


@pytest.fixture
async def standin(spec: BotApiSpec) -> AsyncIterator[BotApiStandIn]:
    """A stand-in on an ephemeral 127.0.0.1 port, stopped after the test."""
    async with BotApiStandIn(spec=spec) as running:
        yield running


@pytest.fixture
async def bot(standin: BotApiStandIn) -> AsyncIterator[Bot]:
    """A real telegram.Bot talking HTTP to the stand-in."""
    async with Bot(
        standin.token, base_url=standin.base_url, base_file_url=standin.base_file_url
    ) as real_bot:
        yield real_bot
