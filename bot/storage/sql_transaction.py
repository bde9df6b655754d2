"""The store's queries, written once: the transaction both databases run.

:class:`SqlTransaction` implements :class:`~bot.rounds.store_port.Transaction` in portable SQL
with ``?`` placeholders. :class:`~bot.storage.sqlite.SqliteStore` runs it on aiosqlite as it is;
:class:`~bot.storage.postgres.PostgresTransaction` inherits every query and only swaps the
three low-level calls, translating the SQL for asyncpg.
"""

from __future__ import annotations

import json
import re
from collections.abc import Sequence
from typing import Any

from bot.rounds.messages import Action
from bot.rounds.phases import Phase
from bot.rounds.records import (
    AuditRecord,
    MemberRecord,
    QuestionRecord,
    RoundRecord,
    TokenRecord,
)
from bot.rounds.round_settings import RoundSettings
from bot.storage.later_sql import LaterQueries
from bot.storage.migrations import OPEN_PHASES_SQL
from bot.storage.retention_sql import RetentionQueries
from bot.storage.search_sql import SearchStepQueries

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
    "agreements",
    "search_steps",
)
_ROUND_COLUMNS = (
    "id, group_id, admin_id, phase, settings, walk, walk_rev, proposal_no, previous_round, "
    "created_at, updated_at, forgotten_at"
)
_ROUND_COLUMNS_OF_R = ", ".join(f"r.{c.strip()}" for c in _ROUND_COLUMNS.split(","))
_QUESTION_COLUMNS = (
    "round_id, qid, user_id, prices, choices, asked_at, answered_at, room, withdrawn_at"
)


class SqlTransaction(LaterQueries, RetentionQueries, SearchStepQueries):
    """The :class:`~bot.rounds.store_port.Transaction` protocol in one SQL text for both databases.

    Written for SQLite's dialect (``?`` placeholders) on one aiosqlite connection; the
    PostgreSQL store subclasses it and translates each statement (:mod:`bot.storage.dialect`).
    """

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
        if walk_json is not None:  # a new snapshot covers every step stored after the old one
            await self._run("DELETE FROM search_steps WHERE round_id = ?", (round_id,))

    async def unrecorded_settled_rounds(self, group_id: int) -> list[RoundRecord]:
        """Settled rounds with a walk but no stored agreement (agreed before migration 7)."""
        rows = await self._all(
            f"SELECT {_ROUND_COLUMNS} FROM rounds WHERE group_id = ? AND phase = ? "
            "AND walk IS NOT NULL AND id NOT IN (SELECT round_id FROM agreements) ORDER BY id",
            (group_id, Phase.SETTLED.value),
        )
        return [record for row in rows if (record := _round(row)) is not None]

    async def rounds_to_forget(
        self, ended_before: int, phases: Sequence[Phase] | frozenset[Phase]
    ) -> list[RoundRecord]:
        """Rounds in ``phases`` (the ended ones) last changed before ``ended_before`` and
        not forgotten yet, oldest first."""
        rows = await self._all(
            f"SELECT {_ROUND_COLUMNS} FROM rounds WHERE forgotten_at IS NULL AND updated_at < ? "
            f"AND phase IN ({', '.join('?' for _ in phases)}) ORDER BY id",
            (ended_before, *sorted(phase.value for phase in phases)),
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
            "SELECT round_id, user_id, display_name, joined_at, accepted_at, rough_values "
            "FROM members WHERE round_id = ? ORDER BY joined_at, user_id",
            (round_id,),
        )
        return [
            MemberRecord(
                row[0],
                row[1],
                row[2],
                row[3],
                row[4],
                tuple(json.loads(row[5])) if row[5] is not None else None,
            )
            for row in rows
        ]

    async def set_rough_values(
        self, round_id: int, user_id: int, values: tuple[int, ...] | None
    ) -> None:
        await self._run(
            "UPDATE members SET rough_values = ? WHERE round_id = ? AND user_id = ?",
            (json.dumps(list(values)) if values is not None else None, round_id, user_id),
        )

    async def gathering_rounds_of(self, user_id: int) -> list[RoundRecord]:
        """Rounds still being set up or collecting members that ``user_id`` has joined."""
        rows = await self._all(
            f"SELECT {_ROUND_COLUMNS_OF_R} FROM rounds r JOIN members m ON m.round_id = r.id "
            "WHERE m.user_id = ? AND r.phase IN ('drafting', 'gathering') ORDER BY r.id",
            (user_id,),
        )
        return [record for record in map(_round, rows) if record is not None]

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
            f"INSERT INTO questions ({_QUESTION_COLUMNS}) VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?)",
            (
                question.round_id,
                question.qid,
                question.user_id,
                json.dumps(list(question.prices)),
                json.dumps(list(question.choices)),
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
        """In the order they were asked: by time, then by the numbers in their ids (``q9``
        before ``q10``, ``r2-3`` before ``r10-1``), sorted here because the two databases
        disagree on casting text such as ``1-1`` to a number."""
        rows = await self._all(
            f"SELECT {_QUESTION_COLUMNS} FROM questions WHERE round_id = ?", (round_id,)
        )
        return sorted(map(_question, rows), key=lambda q: (q.asked_at, _asked_order(q.qid)))

    async def open_questions(self, round_id: int) -> list[QuestionRecord]:
        """The round's questions still waiting for an answer, in the order they were asked:
        read on every answer, so it never decodes the hundreds a long walk has answered."""
        rows = await self._all(
            f"SELECT {_QUESTION_COLUMNS} FROM questions WHERE round_id = ? "
            "AND answered_at IS NULL AND withdrawn_at IS NULL",
            (round_id,),
        )
        return sorted(map(_question, rows), key=lambda q: (q.asked_at, _asked_order(q.qid)))

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

    async def retract_answer(self, round_id: int, qid: str, at: int) -> None:
        """An answered question the search no longer holds (a correction): kept, marked."""
        await self._run(
            "UPDATE questions SET withdrawn_at = ? WHERE round_id = ? AND qid = ? "
            "AND answered_at IS NOT NULL AND withdrawn_at IS NULL",
            (at, round_id, qid),
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

    async def audit_kinds(self, round_id: int, kinds: Sequence[str]) -> list[AuditRecord]:
        marks = ", ".join("?" for _ in kinds)
        rows = await self._all(
            "SELECT id, round_id, at, kind, user_id, detail FROM audit "
            f"WHERE round_id = ? AND kind IN ({marks}) ORDER BY id",
            (round_id, *kinds),
        )
        return [AuditRecord(*row) for row in rows]


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
        forgotten_at=row[11],
    )


#: Question ids: ``r<round>-<member>`` (rounds), ``q<seq>`` (the walk), ``c<k>-<member>``
#: (confirmation rounds after a hand-over to the walk).
_ID_KINDS = {"r": 0, "q": 1, "c": 2}


def _asked_order(qid: str) -> tuple[int, tuple[int, ...]]:
    return _ID_KINDS.get(qid[:1], 3), tuple(int(n) for n in re.findall(r"\d+", qid))


def _question(row: Any) -> QuestionRecord:
    return QuestionRecord(
        round_id=row[0],
        qid=row[1],
        user_id=row[2],
        prices=tuple(json.loads(row[3])),
        choices=tuple(json.loads(row[4])),
        asked_at=row[5],
        answered_at=row[6],
        room=row[7],
        withdrawn_at=row[8],
    )
