"""Two bot processes on one PostgreSQL database, and connections dropped mid-round.

Real server only (``FLATPACT_TEST_POSTGRES_DSN``; skipped with a reason without it). "Two
processes" are two engines, each with its own store and its own connection pool, exactly what
two ``python -m bot`` processes behind one webhook address have. Every update is delivered to
both at once (a webhook retry racing the original, or a load balancer sending it twice), and
the rounds' updates are interleaved between them.
"""

from __future__ import annotations

import asyncio
import glob
import itertools
import logging
import os
import subprocess
from collections.abc import AsyncIterator, Sequence
from contextlib import asynccontextmanager
from dataclasses import dataclass, field
from pathlib import Path

import pytest
from backends import Schema
from flat_scenario import RENT, RENT_TEXT, ROOMS, SECRET, people, tenants_for

from bot.rounds.clock import ManualClock
from bot.rounds.context import EngineConfig
from bot.rounds.engine import Engine
from bot.rounds.events import Event
from bot.rounds.invariants import check_dump
from bot.rounds.messages import DivisionFacts, Kind, Outgoing
from bot.rounds.phases import Phase
from bot.rounds.simulated_rounds import Rehearsal, RehearsalStuck
from bot.storage.postgres import PostgresStore, PostgresTransaction

GROUPS = 4
ROUND_SIZE = 3


class Processes:
    """Delivers every event to all engines concurrently; exactly one may act on it."""

    def __init__(self, engines: Sequence[Engine]) -> None:
        self.engines = engines
        self.turn = itertools.count()
        self.acted: dict[int, int] = {}

    async def handle(self, event: Event) -> list[Outgoing]:
        start = next(self.turn) % len(self.engines)
        order = [*self.engines[start:], *self.engines[:start]]  # who goes first alternates
        results = await asyncio.gather(*(engine.handle(event) for engine in order))
        # a refusal changes nothing (e.g. a press on a question withdrawn meanwhile), so both
        # processes may give it; acting means producing anything else
        acted = [i for i, out in enumerate(results) if any(m.kind is not Kind.REFUSAL for m in out)]
        assert len(acted) <= 1, f"event {event.key} acted on by {len(acted)} processes"
        for index in acted:
            self.acted[index] = self.acted.get(index, 0) + 1
        return next((out for out in results if out), [])


@dataclass
class ConcurrentRehearsal(Rehearsal):
    """A rehearsal whose keys stay unique when several of its events are in flight at once."""

    sequence: itertools.count[int] = field(default_factory=itertools.count)

    def key(self) -> str:
        return f"{self.key_prefix}-{self.group_id}-k{next(self.sequence)}"

    async def play_concurrently(self, outbox: list[Outgoing]) -> DivisionFacts:
        """React to every message of a batch at once, until the round settles."""
        for _ in range(2_000):
            for message in outbox:
                if message.kind is Kind.SETTLED:
                    assert isinstance(message.facts, DivisionFacts)
                    return message.facts
            batches = await asyncio.gather(*(self.react(m) for m in outbox))
            outbox = [message for batch in batches for message in batch]
        raise RehearsalStuck(f"group {self.group_id} did not settle")


def _plays(router: Processes, clock: ManualClock) -> list[ConcurrentRehearsal]:
    plays = []
    for group in range(GROUPS):
        members = people(ROUND_SIZE, first_id=1000 + 10 * group)
        tenants = tenants_for(members, seed=40 + group)
        engine = router  # duck-typed: Rehearsal only calls .handle
        plays.append(
            ConcurrentRehearsal(engine, -2000 - group, members[0], members, tenants)  # type: ignore[arg-type]
        )
    return plays


async def _answered_once(store: PostgresStore, plays: Sequence[Rehearsal]) -> None:
    dump = await store.dump()
    check_dump(dump)  # among others: the walk's answers and the stored answers agree
    answered = [q for q in dump["questions"] if q[7] is not None]
    assert len(answered) == sum(p.answers for p in plays)
    assert len({(q[0], q[1]) for q in answered}) == len(answered)
    answer_audits = [a for a in dump["audit"] if a[3] == "answer"]
    assert len(answer_audits) == len(answered)
    assert sorted(r[3] for r in dump["rounds"]) == [Phase.SETTLED.value] * len(plays)


async def test_two_processes_handle_interleaved_duplicated_updates_exactly_once(
    pg_schema: Schema, clock: ManualClock
) -> None:
    config = EngineConfig(token_secret=SECRET)
    first = await pg_schema.open_store(clock=clock, max_size=4)
    second = await pg_schema.open_store(clock=clock, max_size=4)
    try:
        router = Processes([Engine(s, clock=clock, config=config) for s in (first, second)])
        plays = _plays(router, clock)
        # Joins of all groups at once: concurrent different updates on the same round.
        openings = await asyncio.gather(*(p.set_up(RENT_TEXT, ROOMS[:ROUND_SIZE]) for p in plays))
        results = await asyncio.gather(
            *(p.play_concurrently(o) for p, o in zip(plays, openings, strict=True))
        )
        assert all(sum(line.price for line in facts.lines) == RENT for facts in results)
        assert set(router.acted) == {0, 1}, "both processes must have done real work"
        await _answered_once(first, plays)
    finally:
        await first.close()
        await second.close()


class DroppingStore:
    """A PostgresStore whose every ``every``-th transaction loses its connection mid-way."""

    def __init__(self, store: PostgresStore, schema: Schema, every: int) -> None:
        self.store = store
        self.schema = schema
        self.every = every
        self.count = 0
        self.drops = 0

    @asynccontextmanager
    async def transaction(self) -> AsyncIterator[PostgresTransaction]:
        async with self.store.transaction() as tx:
            self.count += 1
            if self.count % self.every == 0:
                self.drops += await self.schema.terminate_store_connections()
                await asyncio.sleep(0.05)  # let the server end the backend before we go on
            yield tx

    async def close(self) -> None:
        await self.store.close()


async def test_dropped_connections_mid_round_are_retried_and_nothing_is_lost(
    pg_schema: Schema, clock: ManualClock, caplog: pytest.LogCaptureFixture
) -> None:
    caplog.set_level(logging.WARNING, logger="bot.rounds.retrying")
    store = await pg_schema.open_store(clock=clock, max_size=2)
    dropping = DroppingStore(store, pg_schema, every=5)
    engine = Engine(dropping, clock=clock, config=EngineConfig(token_secret=SECRET))  # type: ignore[arg-type]
    members = people(ROUND_SIZE)
    steps = 0

    async def also_drop_idle_connections(_: Rehearsal, __: Event, ___: list[Outgoing]) -> None:
        nonlocal steps
        steps += 1
        if steps % 7 == 0:  # between transactions: the pool must replace its dead connections
            await pg_schema.terminate_store_connections()

    play = Rehearsal(
        engine,
        -3001,
        members[0],
        members,
        tenants_for(members, 9),
        after_step=also_drop_idle_connections,
    )
    facts = await play.play(await play.set_up(RENT_TEXT, ROOMS[:ROUND_SIZE]))
    assert sum(line.price for line in facts.lines) == RENT
    assert dropping.drops >= 3, "the test must actually have dropped connections mid-transaction"
    retries = [r for r in caplog.records if "storage unavailable" in r.getMessage()]
    assert len(retries) >= dropping.drops // 2
    await _answered_once(store, [play])
    await dropping.close()


def _restart_server() -> None:
    """pg_ctl restart of the server deploy/ci/start-postgres.sh started (fast shutdown)."""
    data = Path(os.environ["FLATPACT_TEST_POSTGRES_DATA"])
    cluster = data / "cluster"
    pg_ctl = sorted(glob.glob("/usr/lib/postgresql/*/bin/pg_ctl"))[-1]
    # -l: the restarted server must not inherit our pipes; restart reuses the old options.
    command = [pg_ctl, "-D", str(cluster), "-l", str(data / "server.log"), "-m", "fast", "-w"]
    command += ["-t", "60", "restart"]
    if os.geteuid() == 0:
        command = ["runuser", "-u", cluster.owner(), "--", *command]
    subprocess.run(command, check=True, capture_output=True, timeout=90)


@pytest.mark.skipif(
    not os.environ.get("FLATPACT_TEST_POSTGRES_DATA"),
    reason="needs FLATPACT_TEST_POSTGRES_DATA from deploy/ci/start-postgres.sh to restart it",
)
async def test_a_server_restart_mid_round_is_retried_and_nothing_is_lost(
    pg_schema: Schema, clock: ManualClock, caplog: pytest.LogCaptureFixture
) -> None:
    caplog.set_level(logging.WARNING, logger="bot.rounds.retrying")
    store = await pg_schema.open_store(clock=clock, max_size=2)
    engine = Engine(store, clock=clock, config=EngineConfig(token_secret=SECRET))
    members = people(ROUND_SIZE)
    restarting: list[asyncio.Task[None]] = []

    async def restart_once(play: Rehearsal, _: Event, __: list[Outgoing]) -> None:
        if play.events == 8 and not restarting:  # mid-round: questions are being answered
            restarting.append(asyncio.create_task(asyncio.to_thread(_restart_server)))
            await asyncio.sleep(0.2)  # let the shutdown begin while the round goes on

    play = Rehearsal(
        engine, -3002, members[0], members, tenants_for(members, 13), after_step=restart_once
    )
    facts = await play.play(await play.set_up(RENT_TEXT, ROOMS[:ROUND_SIZE]))
    await asyncio.wait_for(restarting[0], timeout=90)
    assert sum(line.price for line in facts.lines) == RENT
    assert any("storage unavailable" in r.getMessage() for r in caplog.records)
    await _answered_once(store, [play])
    await store.close()
