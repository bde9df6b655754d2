"""The two storage engines the tests run on: SQLite files in tmp_path and a real PostgreSQL.

PostgreSQL comes from ``$FLATPACT_TEST_POSTGRES_DSN`` (``deploy/ci/start-postgres.sh`` starts
a throw-away server and prints it). Each test gets its own schema, dropped afterwards, so
tests never see each other's rows. Without the variable, or when the server does not answer,
PostgreSQL tests skip and say why.
"""

from __future__ import annotations

import asyncio
import os
import uuid
from collections.abc import Awaitable, Callable
from concurrent.futures import ThreadPoolExecutor
from typing import Any

import asyncpg
import pytest

from bot.storage.postgres import PostgresStore
from bot.storage.sqlite import SqliteStore

DSN_VARIABLE = "FLATPACT_TEST_POSTGRES_DSN"
AnyStore = SqliteStore | PostgresStore
OpenStore = Callable[[], Awaitable[AnyStore]]


def postgres_dsn_or_skip() -> str:
    """The test server's DSN, or a pytest skip naming what is missing."""
    dsn = os.environ.get(DSN_VARIABLE, "")
    if not dsn:
        pytest.skip(
            f'{DSN_VARIABLE} is not set; run: eval "$(deploy/ci/start-postgres.sh)" '
            "to test against PostgreSQL"
        )
    # A thread of its own: the caller may already be inside pytest-asyncio's event loop.
    with ThreadPoolExecutor(max_workers=1) as worker:
        problem = worker.submit(asyncio.run, _probe(dsn)).result()
    if problem:
        pytest.skip(f"PostgreSQL at {DSN_VARIABLE} is unreachable ({problem}); start it first")
    return dsn


async def _probe(dsn: str) -> str:
    try:
        connection = await asyncpg.connect(dsn, timeout=5)
    except (OSError, TimeoutError, asyncpg.PostgresError) as error:
        return f"{type(error).__name__}: {error}"
    await connection.close()
    return ""


class Schema:
    """A fresh PostgreSQL schema for one test; stores opened with ``settings`` live in it."""

    def __init__(self, dsn: str) -> None:
        self.dsn = dsn
        self.name = f"flatpact_t_{uuid.uuid4().hex[:12]}"
        # application_name lets a test find (and terminate) exactly this test's connections.
        self.settings = {"search_path": self.name, "application_name": self.name}

    async def create(self) -> None:
        await self.execute(f"CREATE SCHEMA {self.name}")

    async def drop(self) -> None:
        await self.execute(f"DROP SCHEMA IF EXISTS {self.name} CASCADE")

    async def execute(self, sql: str, *args: Any) -> str:
        connection = await asyncpg.connect(self.dsn, server_settings=self.settings)
        try:
            return str(await connection.execute(sql, *args))
        finally:
            await connection.close()

    async def terminate_store_connections(self) -> int:
        """pg_terminate_backend on every connection of this schema's stores; returns count."""
        connection = await asyncpg.connect(self.dsn)
        try:
            rows = await connection.fetch(
                "SELECT pg_terminate_backend(pid) FROM pg_stat_activity "
                "WHERE application_name = $1 AND pid <> pg_backend_pid()",
                self.name,
            )
        finally:
            await connection.close()
        return sum(1 for row in rows if row[0])

    async def open_store(self, **kwargs: Any) -> PostgresStore:
        return await PostgresStore.open(self.dsn, server_settings=self.settings, **kwargs)
