"""Agreements stored when made, read back in a read transaction; private answers forgotten.

What the group agreed is kept for good (the ``agreements`` table, written in the transaction
that settles the round); what members answered privately is deleted a set number of days
after the round ended (``EngineConfig.keep_answers_days``), and the processed event keys and
sent messages after ``keep_log_days``. The dumps are compared row by row.
"""

from __future__ import annotations

import json
from contextlib import AbstractAsyncContextManager
from dataclasses import replace
from datetime import timedelta
from pathlib import Path
from typing import Any

import pytest
from flat_scenario import GROUP, RENT_TEXT, ROOMS, SECRET, people, tenants_for

from bot.rounds.clock import ManualClock
from bot.rounds.context import EngineConfig
from bot.rounds.engine import Engine
from bot.rounds.events import BeginAsking, MoveGroup, OpenJoining, Rerun, ShowMyAnswers
from bot.rounds.invariants import check_dump
from bot.rounds.messages import AgreementFacts, Kind
from bot.rounds.records import AuditKind, OutboxState
from bot.rounds.searches import load, records_of
from bot.rounds.simulated_rounds import Rehearsal
from bot.rounds.store_port import Store, Transaction
from bot.storage.sqlite import SqliteStore

DAY = 24 * 3600
PRIVATE_KINDS = {
    AuditKind.QUESTION,
    AuditKind.ANSWER,
    AuditKind.INFERRED,
    AuditKind.OBJECTION,
    AuditKind.OBJECTION_STARTED,
    AuditKind.EARLIER_CHOICE,
}


class RecordingStore:
    """A store that notes which kind of transaction each call opened (a fake, not a mock)."""

    def __init__(self, inner: Any) -> None:
        self.inner = inner
        self.kinds: list[str] = []

    def transaction(self) -> AbstractAsyncContextManager[Transaction]:
        self.kinds.append("write")
        return self.inner.transaction()  # type: ignore[no-any-return]

    def read_transaction(self) -> AbstractAsyncContextManager[Transaction]:
        self.kinds.append("read")
        return self.inner.read_transaction()  # type: ignore[no-any-return]

    async def close(self) -> None:
        await self.inner.close()


async def _settled(engine: Engine, seed: int = 4) -> tuple[Rehearsal, list[AgreementFacts]]:
    members = people(3)
    play = Rehearsal(engine, GROUP, members[0], members, tenants_for(members, seed))
    await play.play(await play.set_up(RENT_TEXT, ROOMS[:3]))
    written = [m.facts for m in play.log if m.kind is Kind.AGREEMENT]
    assert all(isinstance(f, AgreementFacts) for f in written) and len(written) == 1
    return play, written  # type: ignore[return-value]


async def test_history_is_the_written_agreement_from_a_read_transaction(
    store: SqliteStore, clock: ManualClock
) -> None:
    recording = RecordingStore(store)
    store_port: Store = recording
    engine = Engine(store_port, clock=clock, config=EngineConfig(token_secret=SECRET))
    _, written = await _settled(engine)
    stored = (await store.dump())["agreements"]
    assert [(row[0], row[1]) for row in stored] == [(written[0].round_id, GROUP)]
    recording.kinds.clear()
    assert await engine.history(GROUP) == written
    assert recording.kinds == ["read"]  # no write transaction, not even an empty one


async def test_a_round_agreed_before_agreements_were_stored_is_still_listed(
    store: SqliteStore, clock: ManualClock
) -> None:
    engine = Engine(store, clock=clock, config=EngineConfig(token_secret=SECRET))
    _, written = await _settled(engine)
    async with store.transaction() as tx:  # as a database from before migration 6 looks
        await tx._run("DELETE FROM agreements")
    assert await engine.history(GROUP) == written


async def test_a_read_transaction_does_not_block_a_writer_in_another_process(
    db_path: Path, clock: ManualClock
) -> None:
    # SQLite in WAL mode: readers do not block a writer (sqlite.org/wal.html, "Concurrency").
    # A BEGIN IMMEDIATE here would hold the write lock and the other writer would time out.
    async with (
        await SqliteStore.open(db_path, clock=clock) as reader,
        await SqliteStore.open(db_path, clock=clock) as writer,
        reader.read_transaction() as read,
    ):
        assert await read.agreements(GROUP) == []
        async with writer.transaction() as write:
            await write.add_contact(7, "en", clock())
        with pytest.raises(Exception, match=r"readonly|read-only|read only"):
            await read.add_contact(8, "en", clock())


async def _forget_after(engine: Engine, clock: ManualClock, days: float) -> None:
    clock.advance(timedelta(days=days))
    await engine.forget(clock())


async def test_private_answers_are_forgotten_after_the_period_and_the_agreement_stays(
    store: SqliteStore, clock: ManualClock
) -> None:
    engine = Engine(store, clock=clock, config=EngineConfig(token_secret=SECRET))
    play, written = await _settled(engine)
    round_id = written[0].round_id
    async with store.transaction() as tx:  # the adapter marks what it sent
        for row in await tx.outgoing(OutboxState.PENDING):
            await tx.set_outgoing_state(row.id, OutboxState.SENT, clock())
    settled = await store.dump()
    assert settled["questions"] and settled["tokens"] and settled["processed_events"]
    assert [row for row in settled["search_steps"] if row[0] == round_id]  # steps after a snapshot
    assert PRIVATE_KINDS & {row[3] for row in settled["audit"]}

    await _forget_after(engine, clock, 29)  # nothing is due yet
    assert await store.dump() == settled
    await _forget_after(engine, clock, 2)  # the log (30 days) goes, the answers stay
    logged = await store.dump()
    assert logged["processed_events"] == [] and logged["outbox"] == []
    assert logged["questions"] == settled["questions"]
    assert logged["audit"] == settled["audit"]

    await _forget_after(engine, clock, 30)  # 61 days after the round ended
    dump = await store.dump()
    assert dump["questions"] == [] and dump["tokens"] == [] and dump["earlier_choices"] == []
    assert dump["search_steps"] == []
    assert [row for row in dump["timers"] if row[1] == round_id] == []
    assert not PRIVATE_KINDS & {row[3] for row in dump["audit"]}
    kept = {row[3] for row in dump["audit"]}
    assert {AuditKind.ROUND_CREATED, AuditKind.JOINED, AuditKind.PROPOSAL} <= kept
    assert {AuditKind.ACCEPTED, AuditKind.AGREEMENT} <= kept
    (row,) = dump["rounds"]
    assert row[3] == "settled" and row[5] is None and row[11] is not None  # walk, forgotten_at
    assert dump["members"] == settled["members"] and dump["agreements"] == settled["agreements"]
    check_dump(dump)
    assert await engine.history(GROUP) == written

    # /myanswers says the answers are gone, rather than showing an empty list.
    out = await engine.handle(ShowMyAnswers("mine", GROUP, play.members[1]))
    assert [m.kind for m in out] == [Kind.REFUSAL]
    assert "deleted" in out[0].facts.reason  # type: ignore[union-attr]

    # A re-run still works; with the earlier answers gone, everyone answers afresh.
    again = Rehearsal(engine, GROUP, play.admin, play.members, play.tenants, key_prefix="again")
    out = await again.send(Rerun(again.key(), GROUP, play.admin, keep_members=True))
    out += await again.send(OpenJoining(again.key(), GROUP, play.admin))
    out += await again.send(BeginAsking(again.key(), GROUP, play.admin))
    assert Kind.EARLIER_OFFER not in [m.kind for m in out]
    await again.play(out)
    dump = await store.dump()
    new_walk = next(r[5] for r in dump["rounds"] if r[0] != round_id)
    assert all(r.source != "earlier" for r in records_of(load(0, new_walk)))
    check_dump(dump)
    assert [f.round_id for f in await engine.history(GROUP)] == [round_id, round_id + 1]


async def test_rough_values_are_forgotten_with_the_answers(
    store: SqliteStore, clock: ManualClock
) -> None:
    engine = Engine(store, clock=clock, config=EngineConfig(token_secret=SECRET))
    play, written = await _settled(engine)
    member = play.members[1].user_id
    async with store.transaction() as tx:  # as if given before the questions started
        await tx.set_rough_values(written[0].round_id, member, (70_000, 45_000, 70_000))
    await _forget_after(engine, clock, 61)
    async with store.transaction() as tx:
        members = await tx.members(written[0].round_id)
    assert [m.rough_values for m in members] == [None] * len(members)


async def test_open_rounds_and_recent_rounds_are_never_forgotten(
    store: SqliteStore, clock: ManualClock
) -> None:
    engine = Engine(store, clock=clock, config=EngineConfig(token_secret=SECRET))
    await _settled(engine)
    members = people(2, first_id=500)
    other = Rehearsal(engine, GROUP - 1, members[0], members, tenants_for(members, 5))
    await other.set_up(RENT_TEXT, ROOMS[:2])  # asking, and it stays asking
    clock.advance(timedelta(days=13))
    await engine.forget(clock())
    dump = await store.dump()
    assert all(row[11] is None for row in dump["rounds"])
    assert {row[0] for row in dump["questions"]} == {row[0] for row in dump["rounds"]}


async def test_a_settled_round_from_before_migration_6_keeps_its_agreement_when_forgotten(
    store: SqliteStore, clock: ManualClock
) -> None:
    engine = Engine(store, clock=clock, config=EngineConfig(token_secret=SECRET))
    _, written = await _settled(engine)
    async with store.transaction() as tx:
        await tx._run("DELETE FROM agreements")
    await _forget_after(engine, clock, 61)
    assert (await store.dump())["rounds"][0][5] is None
    assert await engine.history(GROUP) == written


def test_the_forgotten_round_column_is_where_the_checks_read_it() -> None:
    # The dump's column order is the migrations' order: the flag is the rounds table's 12th.
    from bot.storage.migrations import MIGRATIONS

    added = [s for m in MIGRATIONS for s in m.statements if "forgotten_at" in s]
    assert added and json.dumps(added).count("ALTER TABLE rounds") == 1


async def test_a_read_transaction_refuses_writes(store: SqliteStore) -> None:
    with pytest.raises(Exception, match=r"readonly|read-only"):  # SQLite / PostgreSQL wording
        async with store.read_transaction() as tx:
            await tx.add_contact(8, "en", 0)
    assert (await store.dump())["contacts"] == []


async def test_a_group_that_moved_keeps_its_agreements(
    store: SqliteStore, clock: ManualClock
) -> None:
    engine = Engine(store, clock=clock, config=EngineConfig(token_secret=SECRET))
    _, written = await _settled(engine)
    new_id = GROUP * 1000  # a supergroup's id after the upgrade
    await engine.handle(MoveGroup("moved", GROUP, new_id))
    assert await engine.history(GROUP) == []
    assert await engine.history(new_id) == [replace(written[0], group_id=new_id)]
