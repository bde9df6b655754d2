"""The SQLite implementation of :class:`~bot.store.Store`, on aiosqlite.

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
import json
from collections.abc import AsyncIterator, Sequence
from contextlib import asynccontextmanager
from pathlib import Path
from types import TracebackType
from typing import Any, Self

import aiosqlite

from bot.clock import Clock, system_clock
from bot.errors import StorageFault
from bot.messages import Action
from bot.migrations import OPEN_PHASES_SQL, SCHEMA_VERSION_TABLE, pending
from bot.phases import Phase
from bot.records import (
    AuditRecord,
    MemberRecord,
    OutboxRecord,
    OutboxState,
    QuestionRecord,
    RoundRecord,
    TimerRecord,
    TokenRecord,
)
from bot.settings import RoundSettings

BUSY_TIMEOUT_MS = 5_000
TABLES = (
    "schema_version",
    "rounds",
    "members",
    "questions",
    "tokens",
    "processed_events",
    "audit",
    "timers",
    "outbox",
    "contacts",
    "earlier_choices",
)
_ROUND_COLUMNS = (
    "id, group_id, admin_id, phase, settings, walk, walk_rev, proposal_no, previous_round, "
    "created_at, updated_at"
)
_QUESTION_COLUMNS = (
    "round_id, qid, user_id, prices, choices, sent_message_id, asked_at, answered_at, room, "
    "withdrawn_at"
)
_TIMER_COLUMNS = "id, round_id, kind, user_id, ref, due_at, fired_at"
_OUTBOX_COLUMNS = "id, event_key, seq, chat_id, round_id, kind, ref, payload, state, message_id"


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
    async def transaction(self) -> AsyncIterator[SqliteTransaction]:
        """``BEGIN IMMEDIATE`` ... ``COMMIT``, or ``ROLLBACK`` if the block raises."""
        async with self._lock:
            if self._closed:
                raise StorageFault("the store is closed; open it again before use")
            await self._db.execute("BEGIN IMMEDIATE")
            try:
                yield SqliteTransaction(self._db)
            except BaseException:
                await self._db.execute("ROLLBACK")
                raise
            await self._db.execute("COMMIT")

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


class SqliteTransaction:
    """The :class:`~bot.store.Transaction` protocol on one aiosqlite connection."""

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

    # ----------------------------------------------------------------- idempotency

    async def seen_event(self, key: str) -> bool:
        return await self._one("SELECT 1 FROM processed_events WHERE key = ?", (key,)) is not None

    async def mark_event(self, key: str, at: int) -> None:
        await self._run("INSERT INTO processed_events (key, processed_at) VALUES (?, ?)", (key, at))

    # ----------------------------------------------------------------- rounds

    async def open_round(self, group_id: int) -> RoundRecord | None:
        row = await self._one(
            f"SELECT {_ROUND_COLUMNS} FROM rounds WHERE group_id = ? AND phase IN "
            f"{OPEN_PHASES_SQL}",
            (group_id,),
        )
        return _round(row)

    async def latest_round(self, group_id: int) -> RoundRecord | None:
        row = await self._one(
            f"SELECT {_ROUND_COLUMNS} FROM rounds WHERE group_id = ? ORDER BY id DESC LIMIT 1",
            (group_id,),
        )
        return _round(row)

    async def round_by_id(self, round_id: int) -> RoundRecord | None:
        row = await self._one(f"SELECT {_ROUND_COLUMNS} FROM rounds WHERE id = ?", (round_id,))
        return _round(row)

    async def insert_round(
        self,
        *,
        group_id: int,
        admin_id: int,
        settings: RoundSettings,
        previous_round: int | None,
        at: int,
    ) -> int:
        return await self._run(
            "INSERT INTO rounds (group_id, admin_id, phase, settings, previous_round, "
            "created_at, updated_at) VALUES (?, ?, ?, ?, ?, ?, ?)",
            (
                group_id,
                admin_id,
                Phase.DRAFTING.value,
                settings.to_json(),
                previous_round,
                at,
                at,
            ),
        )

    async def update_round(
        self,
        round_id: int,
        *,
        at: int,
        phase: Phase | None = None,
        settings: RoundSettings | None = None,
        walk_json: str | None = None,
        proposal_no: int | None = None,
    ) -> None:
        sets: list[str] = ["updated_at = ?"]
        params: list[Any] = [at]
        if phase is not None:
            sets.append("phase = ?")
            params.append(phase.value)
        if settings is not None:
            sets.append("settings = ?")
            params.append(settings.to_json())
        if walk_json is not None:
            sets.append("walk = ?, walk_rev = walk_rev + 1")
            params.append(walk_json)
        if proposal_no is not None:
            sets.append("proposal_no = ?")
            params.append(proposal_no)
        params.append(round_id)
        await self._run(f"UPDATE rounds SET {', '.join(sets)} WHERE id = ?", params)

    async def settled_rounds(self, group_id: int) -> list[RoundRecord]:
        rows = await self._all(
            f"SELECT {_ROUND_COLUMNS} FROM rounds WHERE group_id = ? AND phase = ? ORDER BY id",
            (group_id, Phase.SETTLED.value),
        )
        return [record for row in rows if (record := _round(row)) is not None]

    # ----------------------------------------------------------------- earlier answers

    async def set_earlier_choice(self, round_id: int, user_id: int, keep: bool, at: int) -> None:
        await self._run(
            "DELETE FROM earlier_choices WHERE round_id = ? AND user_id = ?", (round_id, user_id)
        )
        await self._run(
            "INSERT INTO earlier_choices (round_id, user_id, keep, chosen_at) VALUES (?, ?, ?, ?)",
            (round_id, user_id, 1 if keep else 0, at),
        )

    async def earlier_choices(self, round_id: int) -> dict[int, bool]:
        rows = await self._all(
            "SELECT user_id, keep FROM earlier_choices WHERE round_id = ?", (round_id,)
        )
        return {int(user_id): bool(keep) for user_id, keep in rows}

    # ----------------------------------------------------------------- members

    async def members(self, round_id: int) -> list[MemberRecord]:
        rows = await self._all(
            "SELECT round_id, user_id, display_name, joined_at, accepted_at FROM members "
            "WHERE round_id = ? ORDER BY joined_at, user_id",
            (round_id,),
        )
        return [MemberRecord(*row) for row in rows]

    async def add_member(self, round_id: int, user_id: int, name: str, at: int) -> None:
        await self._run(
            "INSERT INTO members (round_id, user_id, display_name, joined_at) VALUES (?, ?, ?, ?)",
            (round_id, user_id, name, at),
        )

    async def remove_member(self, round_id: int, user_id: int) -> None:
        await self._run(
            "DELETE FROM members WHERE round_id = ? AND user_id = ?", (round_id, user_id)
        )

    async def set_accepted(self, round_id: int, user_id: int, at: int | None) -> None:
        await self._run(
            "UPDATE members SET accepted_at = ? WHERE round_id = ? AND user_id = ?",
            (at, round_id, user_id),
        )

    async def clear_accepted(self, round_id: int) -> None:
        await self._run("UPDATE members SET accepted_at = NULL WHERE round_id = ?", (round_id,))

    # ----------------------------------------------------------------- questions

    async def insert_question(self, question: QuestionRecord) -> None:
        await self._run(
            f"INSERT INTO questions ({_QUESTION_COLUMNS}) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
            (
                question.round_id,
                question.qid,
                question.user_id,
                json.dumps(list(question.prices)),
                json.dumps(list(question.choices)),
                question.sent_message_id,
                question.asked_at,
                question.answered_at,
                question.room,
                question.withdrawn_at,
            ),
        )

    async def question(self, round_id: int, qid: str) -> QuestionRecord | None:
        row = await self._one(
            f"SELECT {_QUESTION_COLUMNS} FROM questions WHERE round_id = ? AND qid = ?",
            (round_id, qid),
        )
        return None if row is None else _question(row)

    async def questions(self, round_id: int) -> list[QuestionRecord]:
        rows = await self._all(
            f"SELECT {_QUESTION_COLUMNS} FROM questions WHERE round_id = ? ORDER BY asked_at, "
            "CAST(substr(qid, 2) AS INTEGER)",
            (round_id,),
        )
        return [_question(row) for row in rows]

    async def record_answer(self, round_id: int, qid: str, room: int, at: int) -> None:
        await self._run(
            "UPDATE questions SET room = ?, answered_at = ? WHERE round_id = ? AND qid = ? "
            "AND answered_at IS NULL AND withdrawn_at IS NULL",
            (room, at, round_id, qid),
        )

    async def withdraw_question(self, round_id: int, qid: str, at: int) -> None:
        await self._run(
            "UPDATE questions SET withdrawn_at = ? WHERE round_id = ? AND qid = ? "
            "AND answered_at IS NULL AND withdrawn_at IS NULL",
            (at, round_id, qid),
        )

    async def set_sent_message(self, round_id: int, qid: str, message_id: int) -> None:
        await self._run(
            "UPDATE questions SET sent_message_id = ? WHERE round_id = ? AND qid = ?",
            (message_id, round_id, qid),
        )

    # ----------------------------------------------------------------- tokens

    async def put_token(self, token: TokenRecord) -> None:
        await self._run(
            "INSERT OR IGNORE INTO tokens (token, round_id, action, ref, room) "
            "VALUES (?, ?, ?, ?, ?)",
            (token.token, token.round_id, token.action.value, token.ref, token.room),
        )

    async def token(self, token: str) -> TokenRecord | None:
        row = await self._one(
            "SELECT token, round_id, action, ref, room FROM tokens WHERE token = ?", (token,)
        )
        if row is None:
            return None
        return TokenRecord(row[0], row[1], Action(row[2]), row[3], row[4])

    # ----------------------------------------------------------------- audit

    async def audit(
        self, round_id: int, at: int, kind: str, user_id: int | None, detail: str
    ) -> None:
        await self._run(
            "INSERT INTO audit (round_id, at, kind, user_id, detail) VALUES (?, ?, ?, ?, ?)",
            (round_id, at, kind, user_id, detail),
        )

    async def audit_of(self, round_id: int, user_id: int) -> list[AuditRecord]:
        rows = await self._all(
            "SELECT id, round_id, at, kind, user_id, detail FROM audit "
            "WHERE round_id = ? AND user_id = ? ORDER BY id",
            (round_id, user_id),
        )
        return [AuditRecord(*row) for row in rows]

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


def _round(row: Any) -> RoundRecord | None:
    if row is None:
        return None
    return RoundRecord(
        id=row[0],
        group_id=row[1],
        admin_id=row[2],
        phase=Phase(row[3]),
        settings=RoundSettings.from_json(row[4]),
        walk_json=row[5],
        walk_rev=row[6],
        proposal_no=row[7],
        previous_round=row[8],
        created_at=row[9],
        updated_at=row[10],
    )


def _question(row: Any) -> QuestionRecord:
    return QuestionRecord(
        round_id=row[0],
        qid=row[1],
        user_id=row[2],
        prices=tuple(json.loads(row[3])),
        choices=tuple(json.loads(row[4])),
        sent_message_id=row[5],
        asked_at=row[6],
        answered_at=row[7],
        room=row[8],
        withdrawn_at=row[9],
    )
