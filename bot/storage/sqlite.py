"""The SQLite implementation of :class:`~bot.rounds.store_port.Store`, on aiosqlite.

One connection, one :class:`asyncio.Lock`: every transaction holds the lock from ``BEGIN`` to
``COMMIT``/``ROLLBACK``, so concurrent coroutines never share a transaction. The connection
runs with ``isolation_level=None`` so Python's sqlite3 never opens transactions implicitly
(Python docs, sqlite3 "Transaction control"); the store issues ``BEGIN IMMEDIATE`` itself,
which takes the write lock up front instead of upgrading a read transaction later, the
pattern SQLite documents to avoid SQLITE_BUSY upgrades (sqlite.org/lang_transaction.html).

Start-up sets WAL journaling (persistent in the file), ``foreign_keys=ON`` (per connection,
and a no-op inside a transaction, so it is set before any; sqlite.org/foreignkeys.html), a
busy timeout for other processes touching the file, and runs pending migrations.
"""

from __future__ import annotations

import asyncio
from collections.abc import AsyncIterator
from contextlib import asynccontextmanager
from pathlib import Path
from types import TracebackType
from typing import Any, Self

import aiosqlite

from bot.rounds.clock import Clock, system_clock
from bot.rounds.errors import StorageFault
from bot.storage.migrations import SCHEMA_VERSION_TABLE, pending
from bot.storage.sql_transaction import TABLES, SqlTransaction

BUSY_TIMEOUT_MS = 5_000


class SqliteStore:
    """Create with ``await SqliteStore.open(path)``; finish with ``await store.close()``."""

    def __init__(self, connection: aiosqlite.Connection) -> None:
        self._db = connection
        self._lock = asyncio.Lock()
        self._closed = False

    @classmethod
    async def open(cls, path: str | Path, *, clock: Clock = system_clock) -> SqliteStore:
        """Connect, configure the connection and bring the schema up to date."""
        connection = await aiosqlite.connect(str(path), isolation_level=None)
        store = cls(connection)
        try:
            await store._configure()
            await store.migrate(clock())
        except BaseException:
            await connection.close()
            raise
        return store

    async def close(self) -> None:
        """Wait for the running transaction, then close the connection. Safe to call twice."""
        async with self._lock:
            if not self._closed:
                self._closed = True
                await self._db.close()

    async def __aenter__(self) -> Self:
        return self

    async def __aexit__(
        self,
        exc_type: type[BaseException] | None,
        exc: BaseException | None,
        tb: TracebackType | None,
    ) -> None:
        await self.close()

    async def _configure(self) -> None:
        await self._db.execute("PRAGMA journal_mode=WAL")
        await self._db.execute("PRAGMA foreign_keys=ON")
        await self._db.execute(f"PRAGMA busy_timeout={BUSY_TIMEOUT_MS}")
        # FULL: a commit is on disk before the engine acknowledges the answer it holds.
        await self._db.execute("PRAGMA synchronous=FULL")

    async def migrate(self, at: int) -> list[int]:
        """Apply pending migrations, each in its own transaction; returns versions applied."""
        applied_now: list[int] = []
        async with self._lock:
            await self._db.execute(SCHEMA_VERSION_TABLE)
            async with self._db.execute("SELECT version FROM schema_version") as cursor:
                applied = {int(row[0]) for row in await cursor.fetchall()}
            for migration in pending(applied):
                await self._db.execute("BEGIN IMMEDIATE")
                try:
                    for statement in migration.statements:
                        await self._db.execute(statement)
                    await self._db.execute(
                        "INSERT INTO schema_version (version, name, applied_at) VALUES (?, ?, ?)",
                        (migration.version, migration.name, at),
                    )
                    await self._db.execute("COMMIT")
                except BaseException:
                    await self._db.execute("ROLLBACK")
                    raise
                applied_now.append(migration.version)
        return applied_now

    @asynccontextmanager
    async def transaction(self) -> AsyncIterator[SqlTransaction]:
        """``BEGIN IMMEDIATE`` ... ``COMMIT``, or ``ROLLBACK`` if the block raises."""
        async with self._lock:
            if self._closed:
                raise StorageFault("the store is closed; open it again before use")
            await self._db.execute("BEGIN IMMEDIATE")
            try:
                yield SqlTransaction(self._db)
            except BaseException:
                await self._db.execute("ROLLBACK")
                raise
            await self._db.execute("COMMIT")

    @asynccontextmanager
    async def read_transaction(self) -> AsyncIterator[SqlTransaction]:
        """``BEGIN DEFERRED`` with ``query_only`` on: reads one snapshot, writes refused.

        A deferred transaction that only reads takes no write lock, so in WAL mode another
        process's writer is not blocked by it (sqlite.org/lang_transaction.html,
        sqlite.org/wal.html); ``PRAGMA query_only`` makes any write inside it fail
        (sqlite.org/pragma.html#pragma_query_only).
        """
        async with self._lock:
            if self._closed:
                raise StorageFault("the store is closed; open it again before use")
            await self._db.execute("BEGIN DEFERRED")
            await self._db.execute("PRAGMA query_only=ON")
            try:
                yield SqlTransaction(self._db)
            finally:
                await self._db.execute("PRAGMA query_only=OFF")
                await self._db.execute("ROLLBACK")

    async def pragma(self, name: str) -> Any:
        """Read one PRAGMA value (for start-up checks and tests)."""
        async with self._lock, self._db.execute(f"PRAGMA {name}") as cursor:
            row = await cursor.fetchone()
        return None if row is None else row[0]

    async def dump(self) -> dict[str, list[tuple[Any, ...]]]:
        """Every row of every table, sorted: compares storage before and after an event."""
        result: dict[str, list[tuple[Any, ...]]] = {}
        async with self._lock:
            for table in TABLES:
                async with self._db.execute(f"SELECT * FROM {table}") as cursor:
                    rows = [tuple(row) for row in await cursor.fetchall()]
                result[table] = sorted(rows, key=repr)
        return result
