"""The PostgreSQL implementation of :class:`~bot.rounds.store_port.Store`, on an asyncpg pool.

For running several bot processes behind one webhook address. The queries are the SQLite
store's, translated by :mod:`bot.storage.dialect`, so both stores behave the same; what
PostgreSQL adds is concurrency control between processes:

* **Per-group serialisation.** Every read of a round first takes a transaction-scoped
  advisory lock on the round's group (``pg_advisory_xact_lock``, postgresql.org/docs,
  "Advisory Lock Functions"), held until commit or rollback. Two processes handling updates
  of the same round therefore run one after the other, each seeing what the other committed
  (READ COMMITTED takes a fresh snapshot per statement, postgresql.org/docs "Transaction
  Isolation"). A group lock, not ``SELECT ... FOR UPDATE`` on the round row, because a group
  without a round has no row to lock, and two ``/newround`` commands must still queue.
* **Idempotency.** ``seen_event`` first locks the event key, so a duplicate delivered to two
  processes at once waits for the first and then sees its committed key; the primary key on
  ``processed_events.key`` refuses a second copy in any case.
* **Timers.** ``due_timers`` takes one store-wide lock, so two processes never fire the same
  reminder.
* **Dropped connections.** Connection loss, server shutdown, deadlock and serialisation
  failures surface as :class:`~bot.rounds.errors.StorageUnavailable`; the engine re-runs the whole
  transaction (:mod:`bot.rounds.retrying`). The pool replaces broken connections by itself.
"""

from __future__ import annotations

import contextlib
import logging
from collections.abc import AsyncIterator, Mapping, Sequence
from contextlib import asynccontextmanager
from types import TracebackType
from typing import Any, Self

import asyncpg  # type: ignore[import-untyped]

from bot.adapter.redaction import redact, safe_address
from bot.rounds.clock import Clock, system_clock
from bot.rounds.errors import StorageFault, StorageUnavailable
from bot.rounds.records import RoundRecord, TimerRecord
from bot.storage import dialect as postgres_dialect
from bot.storage.migrations import SCHEMA_VERSION_TABLE, pending
from bot.storage.sql_transaction import TABLES, SqlTransaction

log = logging.getLogger(__name__)

# Advisory lock keys of our own (any 64-bit number; chosen from ASCII "FlatMigr" / "FlatTick").
MIGRATION_LOCK = 0x466C61744D696772
TIMERS_LOCK = 0x466C61745469636B

# What "the database went away or gave up on this transaction, try again" looks like.
TRANSIENT_ERRORS: tuple[type[BaseException], ...] = (
    OSError,  # refused / reset while (re)connecting
    TimeoutError,
    asyncpg.exceptions.PostgresConnectionError,  # SQLSTATE class 08, incl. closed connections
    asyncpg.exceptions.AdminShutdownError,  # 57P01, e.g. pg_terminate_backend, fast shutdown
    asyncpg.exceptions.CrashShutdownError,  # 57P02
    asyncpg.exceptions.CannotConnectNowError,  # 57P03, server still starting
    asyncpg.exceptions.TooManyConnectionsError,  # 53300
    asyncpg.exceptions.SerializationError,  # 40001
    asyncpg.exceptions.DeadlockDetectedError,  # 40P01
)


def is_postgres_dsn(target: str) -> bool:
    """True for ``postgresql://`` and ``postgres://`` addresses (libpq URI forms)."""
    return target.startswith(("postgresql://", "postgres://"))


class PostgresStore:
    """Create with ``await PostgresStore.open(dsn)``; finish with ``await store.close()``."""

    def __init__(self, pool: Any) -> None:
        self._pool = pool
        self._closed = False

    @classmethod
    async def open(
        cls,
        dsn: str,
        *,
        clock: Clock = system_clock,
        min_size: int = 1,
        max_size: int = 10,
        server_settings: Mapping[str, str] | None = None,
    ) -> PostgresStore:
        """Connect a pool and bring the schema up to date (one process at a time)."""
        if not is_postgres_dsn(dsn):
            raise StorageFault(
                f"{safe_address(dsn)!r} is not a PostgreSQL address; "
                "use postgresql://user@host:port/database"
            )
        try:
            pool = await asyncpg.create_pool(
                dsn,
                min_size=min_size,
                max_size=max_size,
                server_settings=dict(server_settings or {}),
            )
        except TRANSIENT_ERRORS as error:
            raise StorageUnavailable(
                f"cannot reach PostgreSQL at {safe_address(dsn)}: {redact(str(error))}; "
                "check that the server runs "
                "and FLATPACT_DATABASE names the right host, port and database"
            ) from error
        store = cls(pool)
        try:
            await store.migrate(clock())
        except BaseException:
            await pool.close()
            raise
        return store

    async def close(self) -> None:
        """Wait for transactions in flight, then close every connection. Safe to call twice."""
        if not self._closed:
            self._closed = True
            await self._pool.close()

    async def __aenter__(self) -> Self:
        return self

    async def __aexit__(
        self,
        exc_type: type[BaseException] | None,
        exc: BaseException | None,
        tb: TracebackType | None,
    ) -> None:
        await self.close()

    async def migrate(self, at: int) -> list[int]:
        """Apply pending migrations under a session advisory lock; returns versions applied."""
        applied_now: list[int] = []
        async with self._pool.acquire() as conn:
            await conn.execute("SELECT pg_advisory_lock($1)", MIGRATION_LOCK)
            try:
                await conn.execute(postgres_dialect.schema(SCHEMA_VERSION_TABLE))
                rows = await conn.fetch("SELECT version FROM schema_version")
                for migration in pending({int(row[0]) for row in rows}):
                    async with conn.transaction():
                        for statement in migration.statements:
                            await conn.execute(postgres_dialect.schema(statement))
                        await conn.execute(
                            "INSERT INTO schema_version (version, name, applied_at) "
                            "VALUES ($1, $2, $3)",
                            migration.version,
                            migration.name,
                            at,
                        )
                    applied_now.append(migration.version)
            finally:
                await conn.execute("SELECT pg_advisory_unlock($1)", MIGRATION_LOCK)
        return applied_now

    @asynccontextmanager
    async def transaction(self) -> AsyncIterator[PostgresTransaction]:
        """``BEGIN`` ... ``COMMIT`` on a pooled connection; ``ROLLBACK`` if the block raises.

        Connection-level failures come out as :class:`StorageUnavailable`; everything else
        (refusals, integrity errors) passes through unchanged.
        """
        if self._closed:
            raise StorageFault("the store is closed; open it again before use")
        try:
            conn = await self._pool.acquire()
        except TRANSIENT_ERRORS as error:
            raise StorageUnavailable(f"cannot get a PostgreSQL connection: {error!r}") from error
        try:
            async with conn.transaction():
                yield PostgresTransaction(conn)
        except TRANSIENT_ERRORS as error:
            raise StorageUnavailable(f"PostgreSQL transaction aborted: {error!r}") from error
        except asyncpg.exceptions.InternalClientError as error:
            # Seen when the server ended a pooled connection: asyncpg's protocol is left
            # mid-message. The connection is useless; the pool must replace it.
            _discard(conn)
            raise StorageUnavailable(f"connection broken: {error}") from error
        except asyncpg.exceptions.InterfaceError as error:
            # asyncpg's own "the underlying connection is closed" on rollback/commit
            if _lost(conn):
                raise StorageUnavailable(f"connection lost: {error}") from error
            raise
        finally:
            await self._release(conn)

    @asynccontextmanager
    async def read_transaction(self) -> AsyncIterator[PostgresTransaction]:
        """A ``READ ONLY`` transaction (postgresql.org/docs, "SET TRANSACTION"): any write
        in it fails; it takes no advisory lock unless a round read asks for one."""
        if self._closed:
            raise StorageFault("the store is closed; open it again before use")
        try:
            conn = await self._pool.acquire()
        except TRANSIENT_ERRORS as error:
            raise StorageUnavailable(f"cannot get a PostgreSQL connection: {error!r}") from error
        try:
            async with conn.transaction(readonly=True):
                yield PostgresTransaction(conn)
        except TRANSIENT_ERRORS as error:
            raise StorageUnavailable(f"PostgreSQL transaction aborted: {error!r}") from error
        finally:
            await self._release(conn)

    async def _release(self, conn: Any) -> None:
        """Give the connection back; a broken one is closed (the pool opens a new one).

        A failure here comes after COMMIT or ROLLBACK, so it must not change the outcome.
        """
        try:
            await self._pool.release(conn)
        except (
            *TRANSIENT_ERRORS,
            asyncpg.exceptions.InterfaceError,
            asyncpg.exceptions.InternalClientError,
        ) as error:
            log.info("dropped a broken PostgreSQL connection: %r", error)
            _discard(conn)

    async def dump(self) -> dict[str, list[tuple[Any, ...]]]:
        """Every row of every table, sorted: compares storage before and after an event."""
        result: dict[str, list[tuple[Any, ...]]] = {}
        async with self._pool.acquire() as conn, conn.transaction(isolation="repeatable_read"):
            for table in TABLES:
                rows = [tuple(row) for row in await conn.fetch(f"SELECT * FROM {table}")]
                result[table] = sorted(rows, key=repr)
        return result


class PostgresTransaction(SqlTransaction):
    """The SQLite store's queries, translated, plus PostgreSQL's locks (see module doc)."""

    def __init__(self, conn: Any) -> None:  # deliberately not SqlTransaction's connection
        self._conn = conn

    async def _one(self, sql: str, params: Sequence[Any] = ()) -> Any:
        text, _ = postgres_dialect.query(sql)
        return await self._conn.fetchrow(text, *params)

    async def _all(self, sql: str, params: Sequence[Any] = ()) -> list[Any]:
        text, _ = postgres_dialect.query(sql)
        return list(await self._conn.fetch(text, *params))

    async def _run(self, sql: str, params: Sequence[Any] = ()) -> int:
        text, returns_id = postgres_dialect.query(sql)
        if returns_id:
            return int(await self._conn.fetchval(text, *params) or 0)
        await self._conn.execute(text, *params)
        return 0

    async def _lock(self, key: int) -> None:
        await self._conn.execute("SELECT pg_advisory_xact_lock($1)", key)

    async def seen_event(self, key: str) -> bool:
        await self._conn.execute("SELECT pg_advisory_xact_lock(hashtextextended($1, 0))", key)
        return await super().seen_event(key)

    async def open_round(self, group_id: int) -> RoundRecord | None:
        await self._lock(group_id)
        return await super().open_round(group_id)

    async def latest_round(self, group_id: int) -> RoundRecord | None:
        await self._lock(group_id)
        return await super().latest_round(group_id)

    async def round_by_id(self, round_id: int) -> RoundRecord | None:
        await self._conn.execute(
            "SELECT pg_advisory_xact_lock(group_id) FROM rounds WHERE id = $1", round_id
        )
        return await super().round_by_id(round_id)

    async def due_timers(self, now: int) -> list[TimerRecord]:
        await self._lock(TIMERS_LOCK)
        return await super().due_timers(now)

    async def move_group(self, old_group_id: int, new_group_id: int) -> None:
        for group_id in sorted((old_group_id, new_group_id)):  # one order: no deadlock
            await self._lock(group_id)
        await super().move_group(old_group_id, new_group_id)


def _lost(conn: Any) -> bool:
    """True when the pooled connection died (closed, or already detached by the pool)."""
    try:
        return bool(conn.is_closed())
    except asyncpg.exceptions.InterfaceError:
        return True


def _discard(conn: Any) -> None:
    """Close a broken pooled connection at once; the pool opens a fresh one when needed."""
    with contextlib.suppress(asyncpg.exceptions.InterfaceError):  # pool already closed it
        conn.terminate()
