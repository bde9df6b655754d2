"""Shared fixtures for the engine tests: both storage engines, a manual clock.

``store`` and ``engine`` are parametrised over ``sqlite`` (a real file in ``tmp_path``) and
``postgres`` (a real server, a schema per test; skipped with a reason when none is configured,
see ``backends.py``). ``open_store`` opens another store on the same database: a restart, or a
second bot process.
"""

from __future__ import annotations

import sqlite3
from collections.abc import AsyncIterator
from pathlib import Path

import asyncpg
import pytest
from backends import AnyStore, OpenStore, Schema, postgres_dsn_or_skip
from flat_scenario import SECRET

from bot.rounds.clock import ManualClock
from bot.rounds.context import EngineConfig
from bot.rounds.engine import Engine
from bot.storage.sqlite import SqliteStore

BACKENDS = ("sqlite", "postgres")


@pytest.fixture
def clock() -> ManualClock:
    return ManualClock()


@pytest.fixture
def db_path(tmp_path: Path) -> Path:
    return tmp_path / "flatpact.sqlite3"


@pytest.fixture(scope="session")
def postgres_dsn() -> str:
    return postgres_dsn_or_skip()


@pytest.fixture
async def pg_schema(postgres_dsn: str) -> AsyncIterator[Schema]:
    schema = Schema(postgres_dsn)
    await schema.create()
    yield schema
    await schema.drop()


@pytest.fixture(params=BACKENDS)
def backend(request: pytest.FixtureRequest) -> str:
    return str(request.param)


@pytest.fixture
async def opened_stores() -> AsyncIterator[list[AnyStore]]:
    """Stores opened during the test, closed at its end (before their schema is dropped)."""
    opened: list[AnyStore] = []
    yield opened
    for store in opened:
        await store.close()


@pytest.fixture
def open_store(
    backend: str, request: pytest.FixtureRequest, db_path: Path, clock: ManualClock
) -> OpenStore:
    """Opens stores on this test's database (a restart, or a second bot process)."""
    # Requested in this order so teardown closes the stores first, then drops the schema.
    schema: Schema | None = request.getfixturevalue("pg_schema") if backend == "postgres" else None
    opened: list[AnyStore] = request.getfixturevalue("opened_stores")

    async def open_one() -> AnyStore:
        store: AnyStore
        if schema is None:
            store = await SqliteStore.open(db_path, clock=clock)
        else:
            store = await schema.open_store(clock=clock)
        opened.append(store)
        return store

    return open_one


@pytest.fixture
async def store(open_store: OpenStore) -> AnyStore:
    return await open_store()


@pytest.fixture
def integrity_errors(backend: str) -> tuple[type[Exception], ...]:
    """What each driver raises for a broken constraint (sqlite3 / asyncpg docs)."""
    if backend == "sqlite":
        return (sqlite3.IntegrityError,)
    return (asyncpg.IntegrityConstraintViolationError,)


@pytest.fixture
def engine(store: AnyStore, clock: ManualClock) -> Engine:
    return Engine(store, clock=clock, config=EngineConfig(token_secret=SECRET))
