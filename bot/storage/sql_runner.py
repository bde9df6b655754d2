"""The three low-level calls every store query goes through, on one aiosqlite connection.

The PostgreSQL store overrides exactly these (and ``__init__``) to run the same SQL on asyncpg.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import aiosqlite


class SqlRunner:
    """Runs one statement and returns a row, all rows, or the id of the inserted row."""

    def __init__(self, db: aiosqlite.Connection) -> None:
        self._db = db

    async def _one(self, sql: str, params: Sequence[Any] = ()) -> Any:
        async with self._db.execute(sql, params) as cursor:
            return await cursor.fetchone()

    async def _all(self, sql: str, params: Sequence[Any] = ()) -> list[Any]:
        async with self._db.execute(sql, params) as cursor:
            return list(await cursor.fetchall())

    async def _run(self, sql: str, params: Sequence[Any] = ()) -> int:
        async with self._db.execute(sql, params) as cursor:
            return int(cursor.lastrowid or 0)
