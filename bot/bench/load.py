"""Load benchmark (a script, not a test): concurrent simulated rounds, SQLite vs PostgreSQL.

    python -m bot.bench.load --rounds 40 --rooms 4 [--postgres postgresql://...]

Plays ``--rounds`` invented flats at once through the real engine and a real store, three ways:
SQLite with one process; PostgreSQL with one process; PostgreSQL with two OS processes, each
with its own engine and connection pool, splitting the flats between them (as two webhook
receivers behind a load balancer would). Without ``--postgres`` (or
``$FLATPACT_TEST_POSTGRES_DSN``) only SQLite runs. Each PostgreSQL run uses a fresh schema that
is dropped afterwards.

Reported per run: updates handled per second, p50/p99 time to handle one answer, and outgoing
messages per second compared with Telegram's sending limits: about 30 messages per second per
bot and 20 messages per minute per group (Telegram Bot FAQ, "My bot is hitting limits";
common knowledge, quoted from memory). Bounded: ``--max-seconds`` stops a run that hangs.
"""

from __future__ import annotations

import argparse
import asyncio
import os
import statistics
import tempfile
import time
import uuid
from collections.abc import Sequence
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, field
from pathlib import Path

import asyncpg  # type: ignore[import-untyped]

from bot.rounds.clock import ManualClock
from bot.rounds.context import EngineConfig
from bot.rounds.engine import Engine
from bot.rounds.events import Actor, Event
from bot.rounds.messages import Outgoing
from bot.rounds.simulated_rounds import Rehearsal
from bot.rounds.store_port import Store
from bot.storage.postgres import PostgresStore
from bot.storage.sqlite import SqliteStore
from solver import Problem
from solver.simulate import random_tenants

ROOMS = ("Bay window", "Loft", "Courtyard", "Box room", "Attic", "Garden room")
TELEGRAM_PER_BOT_PER_SECOND = 30  # Bot FAQ, from memory
TELEGRAM_PER_GROUP_PER_MINUTE = 20  # Bot FAQ, from memory


@dataclass
class TimedRehearsal(Rehearsal):
    """A rehearsal that times every answer and counts what the engine sends out."""

    answer_seconds: list[float] = field(default_factory=list)
    sent_private: int = 0
    sent_group: int = 0

    async def send(self, event: Event) -> list[Outgoing]:
        out = await super().send(event)
        self.sent_private += sum(1 for m in out if m.to.private)
        self.sent_group += sum(1 for m in out if not m.to.private)
        return out

    async def answer(self, message: Outgoing) -> list[Outgoing]:
        started = time.perf_counter()
        out = await super().answer(message)
        self.answer_seconds.append(time.perf_counter() - started)
        return out


@dataclass
class Share:
    """What one process measured: wall-clock span and per-round counters."""

    started: float
    finished: float
    events: int
    answers: list[float]
    sent_private: int
    sent_group: int


@dataclass
class Row:
    label: str
    processes: int
    rounds: int
    shares: list[Share]

    @property
    def seconds(self) -> float:
        return max(s.finished for s in self.shares) - min(s.started for s in self.shares)

    @property
    def answers(self) -> list[float]:
        return sorted(a for s in self.shares for a in s.answers)

    def cells(self) -> list[str]:
        events = sum(s.events for s in self.shares)
        sent = sum(s.sent_private + s.sent_group for s in self.shares)
        group_sent = sum(s.sent_group for s in self.shares)
        answers = self.answers
        per_second = sent / self.seconds
        per_group_minute = group_sent / self.rounds / (self.seconds / 60)
        return [
            self.label,
            str(self.processes),
            str(self.rounds),
            str(events),
            f"{self.seconds:.2f}",
            f"{events / self.seconds:.0f}",
            f"{_quantile(answers, 0.50) * 1000:.1f}",
            f"{_quantile(answers, 0.99) * 1000:.1f}",
            f"{per_second:.0f}",
            f"{per_second / TELEGRAM_PER_BOT_PER_SECOND:.1f}x",
            f"{per_group_minute:.0f}",
        ]


HEADER = [
    "store",
    "procs",
    "rounds",
    "updates",
    "wall s",
    "updates/s",
    "p50 ms",
    "p99 ms",
    "msgs/s",
    "vs 30/s",
    "grp msg/min",
]


def _quantile(values: Sequence[float], q: float) -> float:
    if not values:
        return float("nan")
    if len(values) == 1:
        return values[0]
    return statistics.quantiles(values, n=100, method="inclusive")[round(q * 100) - 1]


def _rehearsals(engine: Engine, groups: Sequence[int], rooms: int) -> list[TimedRehearsal]:
    plays = []
    for group in groups:
        members = [Actor(group * 100 + i + 1, f"Flatmate {i + 1}") for i in range(rooms)]
        problem = Problem(185_000, ROOMS[:rooms], tuple(str(m.user_id) for m in members))
        tenants = random_tenants(problem, "quasi-linear", seed=group)
        plays.append(TimedRehearsal(engine, -group - 1, members[0], members, tenants))
    return plays


async def _play(store: Store, groups: Sequence[int], rooms: int, limit: float) -> Share:
    engine = Engine(store, clock=ManualClock(), config=EngineConfig(token_secret=b"bench"))
    plays = _rehearsals(engine, groups, rooms)
    started = time.time()

    async def whole(play: TimedRehearsal) -> None:
        await play.play(await play.set_up("1850.00 EUR", ROOMS[:rooms]))

    await asyncio.wait_for(asyncio.gather(*(whole(p) for p in plays)), timeout=limit)
    return Share(
        started,
        time.time(),
        sum(p.events for p in plays),
        [a for p in plays for a in p.answer_seconds],
        sum(p.sent_private for p in plays),
        sum(p.sent_group for p in plays),
    )


async def _sqlite(path: Path, groups: Sequence[int], rooms: int, limit: float) -> Share:
    async with await SqliteStore.open(path) as store:
        return await _play(store, groups, rooms, limit)


async def _postgres(
    dsn: str, schema: str, groups: Sequence[int], rooms: int, limit: float
) -> Share:
    store = await PostgresStore.open(dsn, server_settings={"search_path": schema}, max_size=8)
    try:
        return await _play(store, groups, rooms, limit)
    finally:
        await store.close()


def _postgres_worker(
    dsn: str, schema: str, groups: Sequence[int], rooms: int, limit: float
) -> Share:
    """Runs in its own OS process: its own event loop, engine and connection pool."""
    return asyncio.run(_postgres(dsn, schema, groups, rooms, limit))


async def _schema(dsn: str, action: str, name: str) -> None:
    connection = await asyncpg.connect(dsn)
    try:
        if action == "create":
            await connection.execute(f"CREATE SCHEMA {name}")
        else:
            await connection.execute(f"DROP SCHEMA IF EXISTS {name} CASCADE")
    finally:
        await connection.close()


async def _migrate(dsn: str, schema: str) -> None:
    store = await PostgresStore.open(dsn, server_settings={"search_path": schema})
    await store.close()


def run_postgres(dsn: str, processes: int, rounds: int, rooms: int, limit: float) -> Row:
    """One fresh schema; migrate it once, then split the flats over ``processes`` processes."""
    name = f"flatpact_bench_{uuid.uuid4().hex[:10]}"
    asyncio.run(_schema(dsn, "create", name))
    try:
        asyncio.run(_migrate(dsn, name))
        groups = list(range(rounds))
        slices = [groups[i::processes] for i in range(processes)]
        with ProcessPoolExecutor(max_workers=processes) as pool:
            futures = [
                pool.submit(_postgres_worker, dsn, name, part, rooms, limit) for part in slices
            ]
            shares = [f.result(timeout=limit + 60) for f in futures]
    finally:
        asyncio.run(_schema(dsn, "drop", name))
    return Row("postgresql", processes, rounds, shares)


def run_sqlite(rounds: int, rooms: int, limit: float) -> Row:
    with tempfile.TemporaryDirectory() as folder:
        share = asyncio.run(
            _sqlite(Path(folder) / "bench.sqlite3", list(range(rounds)), rooms, limit)
        )
    return Row("sqlite", 1, rounds, [share])


def table(rows: Sequence[Row]) -> str:
    cells = [HEADER, *(row.cells() for row in rows)]
    widths = [max(len(line[i]) for line in cells) for i in range(len(HEADER))]
    lines = ["  ".join(c.rjust(w) for c, w in zip(line, widths, strict=True)) for line in cells]
    lines.insert(1, "  ".join("-" * w for w in widths))
    return "\n".join(lines)


def main(argv: Sequence[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description="Concurrent simulated rounds, per store.")
    parser.add_argument("--rounds", type=int, default=40)
    parser.add_argument("--rooms", type=int, default=4, choices=range(2, 7))
    parser.add_argument("--postgres", default=os.environ.get("FLATPACT_TEST_POSTGRES_DSN", ""))
    parser.add_argument("--max-seconds", type=float, default=300.0)
    args = parser.parse_args(argv)
    rows = [run_sqlite(args.rounds, args.rooms, args.max_seconds)]
    if args.postgres:
        for processes in (1, 2):
            rows.append(
                run_postgres(args.postgres, processes, args.rounds, args.rooms, args.max_seconds)
            )
    else:
        print("(no --postgres DSN given: PostgreSQL rows skipped)")
    print(table(rows))
    print(
        f"\nTelegram sends about {TELEGRAM_PER_BOT_PER_SECOND} messages/s per bot and "
        f"{TELEGRAM_PER_GROUP_PER_MINUTE} messages/min per group (Bot FAQ; from memory).\n"
        "'vs 30/s' is how many times faster the engine produces messages than Telegram lets a "
        "bot send them: above 1x, sending, not the engine, is the bottleneck. 'grp msg/min' is "
        "the group-chat messages per group per minute at this pace; the rounds' questions go "
        "to private chats, which only the 30/s limit covers."
    )
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
