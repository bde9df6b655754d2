"""Queries for what the engine leaves for later: timers, the outbox, contacts, chat moves.

Part of :class:`~bot.storage.sql_transaction.SqlTransaction`, kept apart to keep each module
one concern; portable SQL with ``?`` placeholders like every store query.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

from bot.rounds.records import (
    OutboxRecord,
    OutboxState,
    TimerRecord,
)
from bot.storage.sql_runner import SqlRunner

_TIMER_COLUMNS = "id, round_id, kind, user_id, ref, due_at, fired_at"
_OUTBOX_COLUMNS = "id, event_key, seq, chat_id, round_id, kind, ref, payload, state, message_id"


class LaterQueries(SqlRunner):
    """Timers, the outbox and its claims, contacts, and moving a group to its new chat id."""

    # ----------------------------------------------------------------- timers

    async def add_timer(
        self, round_id: int, kind: str, user_id: int | None, ref: str, due_at: int
    ) -> None:
        await self._run(
            "INSERT OR IGNORE INTO timers (round_id, kind, user_id, ref, due_at) "
            "VALUES (?, ?, ?, ?, ?)",
            (round_id, kind, user_id, ref, due_at),
        )

    async def due_timers(self, now: int) -> list[TimerRecord]:
        rows = await self._all(
            f"SELECT {_TIMER_COLUMNS} FROM timers WHERE fired_at IS NULL AND due_at <= ? "
            "ORDER BY due_at, id",
            (now,),
        )
        return [TimerRecord(*row) for row in rows]

    async def pending_timers(self) -> list[TimerRecord]:
        rows = await self._all(
            f"SELECT {_TIMER_COLUMNS} FROM timers WHERE fired_at IS NULL ORDER BY due_at, id"
        )
        return [TimerRecord(*row) for row in rows]

    async def mark_fired(self, timer_id: int, at: int) -> None:
        await self._run("UPDATE timers SET fired_at = ? WHERE id = ?", (at, timer_id))

    async def drop_timers(
        self, round_id: int, kinds: Sequence[str] | None = None, ref: str | None = None
    ) -> None:
        sql = "DELETE FROM timers WHERE round_id = ? AND fired_at IS NULL"
        params: list[Any] = [round_id]
        if kinds is not None:
            sql += f" AND kind IN ({', '.join('?' for _ in kinds)})"
            params.extend(kinds)
        if ref is not None:
            sql += " AND ref = ?"
            params.append(ref)
        await self._run(sql, params)

    # ----------------------------------------------------------------- chat migration

    async def move_group(self, old_group_id: int, new_group_id: int) -> None:
        await self._run(
            "UPDATE rounds SET group_id = ? WHERE group_id = ?", (new_group_id, old_group_id)
        )
        await self._run(
            "UPDATE agreements SET group_id = ? WHERE group_id = ?", (new_group_id, old_group_id)
        )
        await self._run(
            "UPDATE outbox SET chat_id = ? WHERE chat_id = ? AND state != 'sent'",
            (new_group_id, old_group_id),
        )

    # ----------------------------------------------------------------- outbox

    async def add_outgoing(
        self,
        *,
        event_key: str,
        seq: int,
        chat_id: int,
        round_id: int | None,
        kind: str,
        ref: str | None,
        payload: str,
        at: int,
    ) -> None:
        await self._run(
            "INSERT INTO outbox (event_key, seq, chat_id, round_id, kind, ref, payload, "
            "created_at) VALUES (?, ?, ?, ?, ?, ?, ?, ?)",
            (event_key, seq, chat_id, round_id, kind, ref, payload, at),
        )

    async def outgoing(self, state: str, chat_id: int | None = None) -> list[OutboxRecord]:
        sql = f"SELECT {_OUTBOX_COLUMNS} FROM outbox WHERE state = ?"
        params: list[Any] = [state]
        if chat_id is not None:
            sql += " AND chat_id = ?"
            params.append(chat_id)
        rows = await self._all(sql + " ORDER BY id", params)
        return [OutboxRecord(*row) for row in rows]

    async def claim_outgoing(self, outbox_id: int, at: int, stale_before: int) -> bool:
        """Take a pending message for sending; False if another process holds it.

        One conditional UPDATE, so two processes sharing the outbox never both send a row
        (with PostgreSQL the second UPDATE waits for the first to commit, then matches nothing).
        A claim older than ``stale_before`` was left by a process that stopped mid-send.
        """
        row = await self._one(
            "UPDATE outbox SET claimed_at = ? WHERE id = ? AND state = ? "
            "AND (claimed_at IS NULL OR claimed_at < ?) RETURNING id",
            (at, outbox_id, OutboxState.PENDING, stale_before),
        )
        return row is not None

    async def release_claim(self, outbox_id: int) -> None:
        """Give a claimed message back (sending must wait): any process may send it later."""
        await self._run("UPDATE outbox SET claimed_at = NULL WHERE id = ?", (outbox_id,))

    async def set_outgoing_state(
        self, outbox_id: int, state: str, at: int, message_id: int | None = None
    ) -> None:
        await self._run(
            "UPDATE outbox SET state = ?, sent_at = ?, message_id = COALESCE(?, message_id), "
            "claimed_at = NULL WHERE id = ?",
            (state, at, message_id, outbox_id),
        )

    async def last_sent(
        self,
        chat_id: int,
        kinds: Sequence[str],
        *,
        ref: str | None = None,
        round_id: int | None = None,
    ) -> OutboxRecord | None:
        sql = (
            f"SELECT {_OUTBOX_COLUMNS} FROM outbox WHERE chat_id = ? AND state = 'sent' "
            f"AND kind IN ({', '.join('?' for _ in kinds)})"
        )
        params: list[Any] = [chat_id, *kinds]
        if ref is not None:
            sql += " AND ref = ?"
            params.append(ref)
        if round_id is not None:
            sql += " AND round_id = ?"
            params.append(round_id)
        row = await self._one(sql + " ORDER BY id DESC LIMIT 1", params)
        return None if row is None else OutboxRecord(*row)

    # ----------------------------------------------------------------- contacts

    async def add_contact(self, user_id: int, language_code: str | None, at: int) -> None:
        await self._run(
            "INSERT INTO contacts (user_id, language_code, opened_at) VALUES (?, ?, ?) "
            "ON CONFLICT (user_id) DO UPDATE SET language_code = excluded.language_code",
            (user_id, language_code, at),
        )

    async def contacts(self, user_ids: Sequence[int]) -> dict[int, str | None]:
        if not user_ids:
            return {}
        rows = await self._all(
            "SELECT user_id, language_code FROM contacts WHERE user_id IN "
            f"({', '.join('?' for _ in user_ids)})",
            list(user_ids),
        )
        return {int(row[0]): row[1] for row in rows}
