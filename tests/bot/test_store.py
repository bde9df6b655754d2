"""The store contract on both engines: migrations, transactions, constraints. Real databases.

Each test runs on SQLite (a file in tmp_path) and on PostgreSQL (a real server; skipped with a
reason without ``FLATPACT_TEST_POSTGRES_DSN``). Engine-specific settings are checked at the end.
"""

from __future__ import annotations

import sqlite3
from pathlib import Path

import pytest
from backends import AnyStore, OpenStore, Schema

from bot.rounds.clock import ManualClock
from bot.rounds.errors import StorageFault
from bot.rounds.messages import Action
from bot.rounds.records import QuestionRecord, TokenRecord
from bot.rounds.round_settings import build_settings
from bot.rounds.setup_input import SetupInput
from bot.storage.migrations import MIGRATIONS
from bot.storage.postgres import PostgresStore
from bot.storage.sqlite import SqliteStore

SETTINGS = build_settings(SetupInput.parse("1850 EUR", ["Loft", "Attic"]))


async def _new_round(store: AnyStore, group_id: int = -1001, admin_id: int = 2) -> int:
    async with store.transaction() as tx:
        return await tx.insert_round(
            group_id=group_id, admin_id=admin_id, settings=SETTINGS, previous_round=None, at=0
        )


async def test_migrations_from_empty_then_rerun_is_a_no_op(
    open_store: OpenStore, clock: ManualClock
) -> None:
    store = await open_store()
    first = await store.dump()
    await store.close()
    assert [row[0] for row in first["schema_version"]] == [m.version for m in MIGRATIONS]
    clock.advance(60)
    again = await open_store()
    assert await again.migrate(clock()) == []
    assert await again.dump() == first


async def test_foreign_keys_are_enforced(
    store: AnyStore, integrity_errors: tuple[type[Exception], ...]
) -> None:
    # SQLite docs (sqlite.org/foreignkeys.html) and PostgreSQL docs (ddl-constraints.html,
    # "Foreign Keys"): inserting a row that references a missing parent fails.
    with pytest.raises(integrity_errors):
        async with store.transaction() as tx:
            await tx.add_member(9999, 1, "Nobody", 0)


async def test_a_failed_transaction_leaves_nothing(store: AnyStore) -> None:
    before = await store.dump()
    with pytest.raises(RuntimeError):
        async with store.transaction() as tx:
            await tx.insert_round(
                group_id=1, admin_id=2, settings=SETTINGS, previous_round=None, at=0
            )
            raise RuntimeError("boom")
    assert await store.dump() == before


async def test_a_committed_transaction_is_visible_to_a_second_store(
    store: AnyStore, open_store: OpenStore
) -> None:
    round_id = await _new_round(store)
    other = await open_store()
    async with other.transaction() as tx:
        found = await tx.round_by_id(round_id)
    assert found is not None and found.group_id == -1001 and found.settings == SETTINGS


async def test_ids_are_64_bit(store: AnyStore) -> None:
    # Bot API spec (Chat.id): "may have more than 32 significant bits"; supergroup ids look
    # like -100xxxxxxxxxx, beyond a 32-bit INTEGER (PostgreSQL docs, datatype-numeric: 4 bytes).
    supergroup = -1_009_876_543_210
    round_id = await _new_round(store, group_id=supergroup, admin_id=7_123_456_789)
    async with store.transaction() as tx:
        found = await tx.open_round(supergroup)
    assert found is not None and found.id == round_id and found.admin_id == 7_123_456_789


async def test_one_open_round_per_group_is_enforced_by_the_schema(
    store: AnyStore, integrity_errors: tuple[type[Exception], ...]
) -> None:
    # A partial unique index (sqlite.org/partialindex.html; PostgreSQL docs, indexes-partial).
    await _new_round(store)
    with pytest.raises(integrity_errors):
        await _new_round(store, admin_id=3)


async def test_event_keys_are_unique(
    store: AnyStore, integrity_errors: tuple[type[Exception], ...]
) -> None:
    async with store.transaction() as tx:
        assert not await tx.seen_event("update-1")
        await tx.mark_event("update-1", 5)
    async with store.transaction() as tx:
        assert await tx.seen_event("update-1")
    with pytest.raises(integrity_errors):
        async with store.transaction() as tx:
            await tx.mark_event("update-1", 6)


async def test_repeated_tokens_and_timers_are_ignored_not_duplicated(store: AnyStore) -> None:
    round_id = await _new_round(store)
    token = TokenRecord("tok-aaaa", round_id, Action.JOIN, "join", None)
    for _ in range(2):
        async with store.transaction() as tx:
            await tx.put_token(token)
            await tx.add_timer(round_id, "lapse", None, "r", 100)  # round-level: no user
            await tx.add_timer(round_id, "reminder", 7, "q1", 50)
    dump = await store.dump()
    assert len(dump["tokens"]) == 1
    assert sorted((row[2], row[3]) for row in dump["timers"]) == [("lapse", None), ("reminder", 7)]
    async with store.transaction() as tx:
        assert await tx.token("tok-aaaa") == token
        due = await tx.due_timers(60)
        assert [t.kind for t in due] == ["reminder"]
        await tx.mark_fired(due[0].id, 60)
    async with store.transaction() as tx:
        assert [t.kind for t in await tx.pending_timers()] == ["lapse"]


async def test_a_closed_store_says_to_reopen(open_store: OpenStore) -> None:
    store = await open_store()
    await store.close()
    await store.close()  # twice is fine
    with pytest.raises(StorageFault, match="open it again"):
        async with store.transaction():
            pass


async def test_unknown_schema_version_is_refused(
    backend: str, open_store: OpenStore, db_path: Path, request: pytest.FixtureRequest
) -> None:
    store = await open_store()
    await store.close()
    if backend == "sqlite":
        with sqlite3.connect(db_path) as raw:
            raw.execute("INSERT INTO schema_version VALUES (99, 'future', 0)")
    else:
        schema: Schema = request.getfixturevalue("pg_schema")
        await schema.execute("INSERT INTO schema_version VALUES (99, 'future', 0)")
    with pytest.raises(RuntimeError, match="newer release"):
        await open_store()


# ----------------------------------------------------------------- engine-specific settings


async def test_sqlite_connection_settings(db_path: Path, clock: ManualClock) -> None:
    async with await SqliteStore.open(db_path, clock=clock) as store:
        # SQLite docs (sqlite.org/wal.html): journal_mode reports "wal" once WAL is on.
        assert await store.pragma("journal_mode") == "wal"
        # SQLite docs (sqlite.org/foreignkeys.html): foreign keys are off unless enabled.
        assert await store.pragma("foreign_keys") == 1
        assert await store.pragma("busy_timeout") == 5000


async def test_postgres_schema_uses_bigint_and_identity(pg_schema: Schema) -> None:
    async with await pg_schema.open_store():
        pass
    import asyncpg

    connection = await asyncpg.connect(pg_schema.dsn)
    try:
        rows = await connection.fetch(
            "SELECT table_name, column_name, data_type, is_identity "
            "FROM information_schema.columns WHERE table_schema = $1",
            pg_schema.name,
        )
    finally:
        await connection.close()
    columns = {
        (r["table_name"], r["column_name"]): (r["data_type"], r["is_identity"]) for r in rows
    }
    # PostgreSQL docs (infoschema-columns.html): data_type "bigint", is_identity "YES"/"NO".
    assert columns[("rounds", "group_id")] == ("bigint", "NO")
    assert columns[("rounds", "id")] == ("bigint", "YES")
    assert columns[("contacts", "user_id")] == ("bigint", "NO")
    assert all(kind != "integer" for kind, _ in columns.values())


async def test_postgres_refuses_a_non_postgres_address() -> None:
    with pytest.raises(StorageFault, match="postgresql://"):
        await PostgresStore.open("/var/lib/flatpact/flatpact.sqlite3")


async def test_open_questions_are_the_unanswered_unwithdrawn_ones_in_asked_order(
    store: AnyStore,
) -> None:
    round_id = await _new_round(store)
    async with store.transaction() as tx:
        await tx.add_member(round_id, 7, "Ana", 0)
        for qid, asked_at in (("q10", 5), ("q9", 5), ("q2", 4), ("q11", 6), ("q12", 7)):
            await tx.insert_question(
                QuestionRecord(round_id, qid, 7, (1000, 850), (0, 1), asked_at, None, None)
            )
        await tx.record_answer(round_id, "q2", 1, 8)
        await tx.withdraw_question(round_id, "q11", 8)
        everything = await tx.questions(round_id)
        still_open = await tx.open_questions(round_id)
    assert [q.qid for q in still_open] == ["q9", "q10", "q12"]
    assert still_open == [q for q in everything if q.open]
