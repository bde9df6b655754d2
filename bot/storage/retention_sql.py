"""Queries for what is kept and what is let go: stored agreements and the retention policy.

Part of :class:`~bot.storage.sql_transaction.SqlTransaction`; portable SQL with ``?``
placeholders like every store query. The policy itself (which rounds, which periods) is
:mod:`bot.rounds.retention`; these only delete what they are told to.
"""

from __future__ import annotations

from collections.abc import Sequence

from bot.rounds.records import AgreementRecord, OutboxState
from bot.storage.migrations import OPEN_PHASES_SQL
from bot.storage.sql_runner import SqlRunner


class RetentionQueries(SqlRunner):
    """The ``agreements`` table, forgetting a finished round's answers, trimming the log."""

    # ----------------------------------------------------------------- agreements

    async def add_agreement(self, round_id: int, group_id: int, at: int, facts: str) -> None:
        """Store a round's written agreement; a second call for the same round changes nothing."""
        await self._run(
            "INSERT OR IGNORE INTO agreements (round_id, group_id, agreed_at, facts) "
            "VALUES (?, ?, ?, ?)",
            (round_id, group_id, at, facts),
        )

    async def agreements(self, group_id: int) -> list[AgreementRecord]:
        rows = await self._all(
            "SELECT round_id, group_id, agreed_at, facts FROM agreements WHERE group_id = ? "
            "ORDER BY round_id",
            (group_id,),
        )
        return [AgreementRecord(*row) for row in rows]

    # ----------------------------------------------------------------- retention

    async def forget_round(self, round_id: int, at: int, audit_kinds: Sequence[str]) -> None:
        """Delete a finished round's questions, tokens, choices, timers, private audit rows
        and search (snapshot and steps); mark it forgotten. ``walk_rev`` moves on so no
        cached search outlives it."""
        for table in ("questions", "tokens", "earlier_choices", "timers", "search_steps"):
            await self._run(f"DELETE FROM {table} WHERE round_id = ?", (round_id,))
        await self._run(
            f"DELETE FROM audit WHERE round_id = ? AND kind IN "
            f"({', '.join('?' for _ in audit_kinds)})",
            (round_id, *audit_kinds),
        )
        # Rough values are as private as answers.
        await self._run("UPDATE members SET rough_values = NULL WHERE round_id = ?", (round_id,))
        await self._run(
            "UPDATE rounds SET walk = NULL, walk_rev = walk_rev + 1, forgotten_at = ? WHERE id = ?",
            (at, round_id),
        )

    async def forget_log(self, before: int) -> None:
        """Delete processed event keys and sent or dropped messages from before ``before``.

        Messages of rounds still open stay (their ids are needed to edit the progress message
        and the proposal); pending and held messages always stay, they are still to be sent.
        """
        await self._run("DELETE FROM processed_events WHERE processed_at < ?", (before,))
        await self._run(
            "DELETE FROM outbox WHERE state IN (?, ?) AND COALESCE(sent_at, created_at) < ? "
            "AND (round_id IS NULL OR round_id NOT IN "
            f"(SELECT id FROM rounds WHERE phase IN {OPEN_PHASES_SQL}))",
            (OutboxState.SENT, OutboxState.DROPPED, before),
        )
