"""The SQLite store: migrations, connection settings, transactions. Real files only."""

from __future__ import annotations

import sqlite3
from pathlib import Path

import pytest

from bot.clock import ManualClock
from bot.migrations import MIGRATIONS
from bot.settings import build_settings
from bot.sqlite_store import SqliteStore


async def test_migrations_from_an_empty_file_then_rerun_is_a_no_op(
    db_path: Path, clock: ManualClock
) -> None:
    async with await SqliteStore.open(db_path, clock=clock) as store:
        first = await store.dump()
    assert [row[0] for row in first["schema_version"]] == [m.version for m in MIGRATIONS]
    clock.advance(60)
    async with await SqliteStore.open(db_path, clock=clock) as store:
        assert await store.migrate(clock()) == []
        assert await store.dump() == first


async def test_connection_settings(store: SqliteStore) -> None:
    # SQLite docs (sqlite.org/wal.html): journal_mode reports "wal" once WAL is on.
    assert await store.pragma("journal_mode") == "wal"
    # SQLite docs (sqlite.org/foreignkeys.html): foreign keys are off unless enabled.
    assert await store.pragma("foreign_keys") == 1
    assert await store.pragma("busy_timeout") == 5000


async def test_foreign_keys_are_enforced(store: SqliteStore) -> None:
    with pytest.raises(sqlite3.IntegrityError):
        async with store.transaction() as tx:
            await tx.add_member(9999, 1, "Nobody", 0)


async def test_a_failed_transaction_leaves_nothing(store: SqliteStore) -> None:
    before = await store.dump()
    settings = build_settings(rent="1850 EUR", rooms=["Loft", "Attic"])
    with pytest.raises(RuntimeError):
        async with store.transaction() as tx:
            await tx.insert_round(
                group_id=1, admin_id=2, settings=settings, previous_round=None, at=0
            )
            raise RuntimeError("boom")
    assert await store.dump() == before


async def test_one_open_round_per_group_is_enforced_by_the_schema(store: SqliteStore) -> None:
    settings = build_settings(rent="1850 EUR", rooms=["Loft", "Attic"])
    async with store.transaction() as tx:
        await tx.insert_round(group_id=1, admin_id=2, settings=settings, previous_round=None, at=0)
    with pytest.raises(sqlite3.IntegrityError):
        async with store.transaction() as tx:
            await tx.insert_round(
                group_id=1, admin_id=3, settings=settings, previous_round=None, at=0
            )


async def test_unknown_schema_version_is_refused(db_path: Path, clock: ManualClock) -> None:
    async with await SqliteStore.open(db_path, clock=clock):
        pass
    with sqlite3.connect(db_path) as raw:
        raw.execute("INSERT INTO schema_version VALUES (99, 'future', 0)")
    with pytest.raises(RuntimeError, match="newer release"):
        await SqliteStore.open(db_path, clock=clock)
