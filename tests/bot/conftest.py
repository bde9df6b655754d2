"""Shared fixtures for the engine tests: real SQLite files in ``tmp_path``, a manual clock."""

from __future__ import annotations

from collections.abc import AsyncIterator
from pathlib import Path

import pytest
from flat_scenario import SECRET

from bot.clock import ManualClock
from bot.context import EngineConfig
from bot.engine import Engine
from bot.sqlite_store import SqliteStore


@pytest.fixture
def clock() -> ManualClock:
    return ManualClock()


@pytest.fixture
def db_path(tmp_path: Path) -> Path:
    return tmp_path / "flatpact.sqlite3"


@pytest.fixture
async def store(db_path: Path, clock: ManualClock) -> AsyncIterator[SqliteStore]:
    opened = await SqliteStore.open(db_path, clock=clock)
    yield opened
    await opened.close()


@pytest.fixture
def engine(store: SqliteStore, clock: ManualClock) -> Engine:
    return Engine(store, clock=clock, config=EngineConfig(token_secret=SECRET))
