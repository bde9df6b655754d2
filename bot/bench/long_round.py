"""Benchmark (a script, not a test): what one answer costs as a long round grows.

``python -m bot.bench.long_round --rooms 10 --seed 3 --answers 2200`` plays one round with
questions one at a time (the walk, the longest kind of round) on a fresh SQLite file and
times every answer end to end through the engine (one committed transaction each: the search
steps in a worker thread, the search stored, the outbox written). The simulated flatmates'
tastes come from ``--seed``: seed 1 settles a 10-room walk after 838 answers, seed 2 after
1080, seed 3 after 2134 (measured). For the answers from ``--late`` on (1000) it prints the
median, 90th percentile and largest time, and the bytes each answer wrote: the text handed
to SQL (counted on the connection) and what the process passed to ``write`` (``wchar`` in
``/proc/self/io``: SQLite's WAL and checkpoints, Linux only). Then it times loading the
search from the database into a fresh engine (a restart). ``--snapshot-every`` overrides
``EngineConfig.snapshot_every``; ``--rounds-of-questions`` plays the default kind of round
(everyone at once). The script runs unchanged on code from before the search was stored in
steps (without ``--snapshot-every``), for before/after figures.
"""

from __future__ import annotations

import argparse
import asyncio
import statistics
import tempfile
import time
from collections.abc import Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

from bot.rounds.clock import ManualClock
from bot.rounds.context import EngineConfig
from bot.rounds.engine import Engine
from bot.rounds.events import Actor
from bot.rounds.messages import Kind
from bot.rounds.simulated_rounds import Rehearsal
from bot.storage.sqlite import SqliteStore
from solver import Problem
from solver.simulate import random_tenants

RENT_TEXT, RENT = "3000.00 EUR", 300_000
PROC_IO = Path("/proc/self/io")


class CountingConnection:
    """Wraps the store's connection; adds up the text handed to every write statement."""

    def __init__(self, inner: Any) -> None:
        self.inner = inner
        self.written = 0

    def execute(self, sql: str, parameters: Sequence[Any] = ()) -> Any:
        if not sql.lstrip().upper().startswith("SELECT"):
            self.written += sum(len(p) for p in parameters if isinstance(p, str | bytes))
        return self.inner.execute(sql, parameters)

    def __getattr__(self, name: str) -> Any:
        return getattr(self.inner, name)


def process_writes() -> int:
    """Bytes this process has passed to ``write`` so far (0 where /proc is missing)."""
    if not PROC_IO.exists():
        return 0
    fields = dict(line.split(": ") for line in PROC_IO.read_text().splitlines())
    return int(fields["wchar"])


@dataclass
class Figures:
    times: list[float] = field(default_factory=list)
    sql_bytes: list[int] = field(default_factory=list)
    os_bytes: list[int] = field(default_factory=list)
    load_seconds: float = 0.0
    stored_bytes: int = 0


async def bench(
    rooms: int, answers: int, one_by_one: bool, seed: int, every: int | None, path: Path
) -> Figures:
    clock = ManualClock()
    config = EngineConfig(token_secret=b"bench", max_questions_per_member=10**6)
    if every is not None:
        config = replace(config, snapshot_every=every)
    figures = Figures()
    async with await SqliteStore.open(path, clock=clock) as store:
        counting = CountingConnection(store._db)
        store._db = counting  # type: ignore[assignment]
        engine = Engine(store, clock=clock, config=config)
        members = [Actor(100 + i, f"Flatmate {i + 1}") for i in range(rooms)]
        names = tuple(f"Room {i + 1}" for i in range(rooms))
        problem = Problem(RENT, names, tuple(str(m.user_id) for m in members))
        tenants = random_tenants(problem, "quasi-linear", seed)
        play = Rehearsal(engine, -1, members[0], members, tenants)
        queue = list(await play.set_up(RENT_TEXT, names, one_by_one=one_by_one))
        while queue and len(figures.times) < answers:
            message = queue.pop(0)
            if message.kind is not Kind.QUESTION:
                continue
            sql_before, os_before = counting.written, process_writes()
            started = time.perf_counter()
            queue.extend(await play.answer(message))
            figures.times.append(time.perf_counter() - started)
            figures.sql_bytes.append(counting.written - sql_before)
            figures.os_bytes.append(process_writes() - os_before)
        async with store.transaction() as tx:
            record = await tx.latest_round(-1)
        assert record is not None
        dump = await store.dump()
        steps = sum(len(row[2]) for row in dump.get("search_steps", []) if row[0] == record.id)
        figures.stored_bytes = len(record.walk_json or "") + steps
        started = time.perf_counter()
        await Engine(store, clock=clock, config=config).search_of(record.id)  # a cold cache
        figures.load_seconds = time.perf_counter() - started
    return figures


def _spread(values: Sequence[float], scale: float, unit: str) -> str:
    ordered = sorted(values)
    p90 = ordered[min(len(ordered) - 1, int(len(ordered) * 0.9))]
    return (
        f"median {statistics.median(ordered) * scale:.1f} {unit}, p90 {p90 * scale:.1f} {unit}, "
        f"max {ordered[-1] * scale:.1f} {unit}, mean {statistics.fmean(ordered) * scale:.1f} {unit}"
    )


def main(argv: Sequence[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description="Per-answer time as one long round grows.")
    parser.add_argument("--rooms", type=int, default=10, choices=range(2, 11))
    parser.add_argument("--answers", type=int, default=2200)
    parser.add_argument("--seed", type=int, default=3, help="the flatmates' tastes")
    parser.add_argument("--late", type=int, default=1000, help="report answers from here on")
    parser.add_argument("--snapshot-every", type=int, default=None)
    parser.add_argument("--rounds-of-questions", action="store_true")
    args = parser.parse_args(argv)
    with tempfile.TemporaryDirectory() as folder:
        figures = asyncio.run(
            bench(
                args.rooms,
                args.answers,
                not args.rounds_of_questions,
                args.seed,
                args.snapshot_every,
                Path(folder) / "b.db",
            )
        )
    count = len(figures.times)
    first = args.late if count > args.late else count // 2
    print(
        f"{count} answers, {args.rooms} rooms, seed {args.seed}; stored search at the end "
        f"{figures.stored_bytes / 1024:.0f} KiB (snapshot + steps)"
    )
    print(f"answers {first + 1}-{count}:")
    print(f"  time per answer     {_spread(figures.times[first:], 1000, 'ms')}")
    print(f"  SQL text per answer {_spread(figures.sql_bytes[first:], 1 / 1024, 'KiB')}")
    print(f"  write() per answer  {_spread(figures.os_bytes[first:], 1 / 1024, 'KiB')}")
    print(f"all answers: median {statistics.median(figures.times) * 1000:.1f} ms")
    print(f"loading the search into a fresh engine: {figures.load_seconds * 1000:.1f} ms")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
