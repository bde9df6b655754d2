"""The storage boundary: what the engine needs from a database, and nothing about SQL.

:class:`~bot.storage.sqlite.SqliteStore` and :class:`~bot.storage.postgres.PostgresStore`
implement it (one SQL text, :mod:`bot.storage.sql_transaction`). The contract that matters
most: everything done through one :class:`Transaction` is committed together when the
``async with`` block ends normally, and nothing of it survives when the block raises.
"""

from __future__ import annotations

from collections.abc import Sequence
from contextlib import AbstractAsyncContextManager
from typing import Protocol

from bot.rounds.phases import Phase
from bot.rounds.records import (
    AgreementRecord,
    AuditRecord,
    MemberRecord,
    OutboxRecord,
    QuestionRecord,
    RoundRecord,
    TimerRecord,
    TokenRecord,
)
from bot.rounds.round_settings import RoundSettings


class Transaction(Protocol):
    """Reads and writes inside one transaction (a read transaction refuses the writes)."""

    # idempotency
    async def seen_event(self, key: str) -> bool: ...
    async def mark_event(self, key: str, at: int) -> None: ...

    # rounds
    async def open_round(self, group_id: int) -> RoundRecord | None: ...
    async def latest_round(self, group_id: int) -> RoundRecord | None: ...
    async def round_by_id(self, round_id: int) -> RoundRecord | None: ...
    async def insert_round(
        self,
        *,
        group_id: int,
        admin_id: int,
        settings: RoundSettings,
        previous_round: int | None,
        at: int,
    ) -> int: ...
    async def update_round(
        self,
        round_id: int,
        *,
        at: int,
        phase: Phase | None = None,
        settings: RoundSettings | None = None,
        walk_json: str | None = None,
        proposal_no: int | None = None,
    ) -> None: ...

    # a round's search: the snapshot is ``update_round(walk_json=...)`` (which deletes the
    # steps it covers); each later call the bot makes is one appended step
    # (bot.rounds.search_steps). Appending moves ``walk_rev`` on, like a snapshot does.
    async def add_search_step(self, round_id: int, seq: int, step: str, at: int) -> None: ...
    async def search_steps(self, round_id: int) -> list[str]: ...

    async def unrecorded_settled_rounds(self, group_id: int) -> list[RoundRecord]: ...
    async def rounds_to_forget(
        self, ended_before: int, phases: Sequence[Phase] | frozenset[Phase]
    ) -> list[RoundRecord]: ...

    # written agreements, kept for good (one per settled round)
    async def add_agreement(self, round_id: int, group_id: int, at: int, facts: str) -> None: ...
    async def agreements(self, group_id: int) -> list[AgreementRecord]: ...

    # retention: a finished round's private answers, and the old event and message log
    async def forget_round(self, round_id: int, at: int, audit_kinds: Sequence[str]) -> None: ...
    async def forget_log(self, before: int) -> None: ...

    # a member's choice to reuse their answers from the previous round (no row: reuse)
    async def set_earlier_choice(
        self, round_id: int, user_id: int, keep: bool, at: int
    ) -> None: ...
    async def earlier_choices(self, round_id: int) -> dict[int, bool]: ...

    # members
    async def members(self, round_id: int) -> list[MemberRecord]: ...
    async def set_rough_values(
        self, round_id: int, user_id: int, values: tuple[int, ...] | None
    ) -> None: ...
    async def gathering_rounds_of(self, user_id: int) -> list[RoundRecord]: ...
    async def add_member(self, round_id: int, user_id: int, name: str, at: int) -> None: ...
    async def remove_member(self, round_id: int, user_id: int) -> None: ...
    async def set_accepted(self, round_id: int, user_id: int, at: int | None) -> None: ...
    async def clear_accepted(self, round_id: int) -> None: ...

    # questions
    async def insert_question(self, question: QuestionRecord) -> None: ...
    async def question(self, round_id: int, qid: str) -> QuestionRecord | None: ...
    async def questions(self, round_id: int) -> list[QuestionRecord]: ...
    async def open_questions(self, round_id: int) -> list[QuestionRecord]: ...
    async def record_answer(self, round_id: int, qid: str, room: int, at: int) -> None: ...
    async def withdraw_question(self, round_id: int, qid: str, at: int) -> None: ...

    # tokens
    async def put_token(self, token: TokenRecord) -> None: ...
    async def token(self, token: str) -> TokenRecord | None: ...

    # audit
    async def audit(
        self, round_id: int, at: int, kind: str, user_id: int | None, detail: str
    ) -> None: ...
    async def audit_of(self, round_id: int, user_id: int) -> list[AuditRecord]: ...

    # timers
    async def add_timer(
        self, round_id: int, kind: str, user_id: int | None, ref: str, due_at: int
    ) -> None: ...
    async def due_timers(self, now: int) -> list[TimerRecord]: ...
    async def pending_timers(self) -> list[TimerRecord]: ...
    async def mark_fired(self, timer_id: int, at: int) -> None: ...
    async def drop_timers(
        self, round_id: int, kinds: Sequence[str] | None = None, ref: str | None = None
    ) -> None: ...

    # chat migration (a group upgraded to a supergroup keeps its rounds and its outbox)
    async def move_group(self, old_group_id: int, new_group_id: int) -> None: ...

    # outbox: messages committed with their event, sent afterwards by the adapter
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
    ) -> None: ...
    async def outgoing(self, state: str, chat_id: int | None = None) -> list[OutboxRecord]: ...
    async def claim_outgoing(self, outbox_id: int, at: int, stale_before: int) -> bool: ...
    async def release_claim(self, outbox_id: int) -> None: ...
    async def set_outgoing_state(
        self, outbox_id: int, state: str, at: int, message_id: int | None = None
    ) -> None: ...
    async def last_sent(
        self,
        chat_id: int,
        kinds: Sequence[str],
        *,
        ref: str | None = None,
        round_id: int | None = None,
    ) -> OutboxRecord | None: ...

    # people who opened a private chat with the bot
    async def add_contact(self, user_id: int, language_code: str | None, at: int) -> None: ...
    async def contacts(self, user_ids: Sequence[int]) -> dict[int, str | None]: ...


class Store(Protocol):
    """A database with an explicit lifecycle and serialised write transactions."""

    def transaction(self) -> AbstractAsyncContextManager[Transaction]: ...

    def read_transaction(self) -> AbstractAsyncContextManager[Transaction]:
        """A transaction that only reads: it takes no write lock and refuses any write
        (SQLite ``BEGIN DEFERRED`` with ``query_only``; PostgreSQL ``READ ONLY``)."""
        ...

    async def close(self) -> None: ...
