"""One setting, two databases: ``FLATPACT_DATABASE`` is a SQLite path or a PostgreSQL DSN.

SQLite suits one bot process on one host; PostgreSQL suits several processes behind one
webhook address (see deploy/README.md). The adapter calls :func:`open_store` and never needs
to know which it got.
"""

from __future__ import annotations

from pathlib import Path

from bot.rounds.clock import Clock, system_clock
from bot.storage.postgres import PostgresStore, is_postgres_dsn
from bot.storage.sqlite import SqliteStore


async def open_store(
    database: str | Path, *, clock: Clock = system_clock
) -> SqliteStore | PostgresStore:
    """Open (and migrate) the store ``database`` names: ``postgresql://...`` or a file path."""
    target = str(database)
    if is_postgres_dsn(target):
        return await PostgresStore.open(target, clock=clock)
    return await SqliteStore.open(Path(target), clock=clock)
