"""Queries for a round's stored search: the steps appended after its snapshot.

Part of :class:`~bot.storage.sql_transaction.SqlTransaction`; portable SQL with ``?``
placeholders like every store query. The snapshot itself is ``rounds.walk``, written by
``update_round(walk_json=...)``, which also deletes the steps it covers. Why a search is
stored this way: :mod:`bot.rounds.search_steps`.
"""

from __future__ import annotations

from bot.storage.sql_runner import SqlRunner


class SearchStepQueries(SqlRunner):
    """The ``search_steps`` table (migration 8)."""

    async def add_search_step(self, round_id: int, seq: int, step: str, at: int) -> None:
        """Append step number ``seq`` (1, 2, ... after the snapshot). ``walk_rev`` moves on,
        so another process's cached search of this round is known to be stale."""
        await self._run(
            "INSERT INTO search_steps (round_id, seq, step) VALUES (?, ?, ?)",
            (round_id, seq, step),
        )
        await self._run(
            "UPDATE rounds SET walk_rev = walk_rev + 1, updated_at = ? WHERE id = ?",
            (at, round_id),
        )

    async def search_steps(self, round_id: int) -> list[str]:
        """The steps stored after the round's snapshot, in the order they were applied."""
        rows = await self._all(
            "SELECT step FROM search_steps WHERE round_id = ? ORDER BY seq", (round_id,)
        )
        return [str(row[0]) for row in rows]
