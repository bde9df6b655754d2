"""Benchmark (a script, not a test): what one answer costs as a long round grows.

``python -m bot.bench.long_round --rooms 10 --answers 1100`` plays one round with questions
one at a time (the walk, the longest kind of round) on a fresh SQLite file and times every
answer end to end through the engine (one committed transaction each: the search steps in a
worker thread, the search saved, the outbox written). It prints the median and the largest
time of the answers after the first thousand, and the size of the stored search. With
``--rounds-of-questions`` it plays the default kind of round instead (everyone at once).
"""

from __future__ import annotations

import argparse
import asyncio
import statistics
import tempfile
import time
from collections.abc import Sequence
from pathlib import Path

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


async def bench(rooms: int, answers: int, one_by_one: bool, path: Path) -> tuple[list[float], int]:
    clock = ManualClock()
    async with await SqliteStore.open(path, clock=clock) as store:
        config = EngineConfig(token_secret=b"bench", max_questions_per_member=10**6)
        engine = Engine(store, clock=clock, config=config)
        members = [Actor(100 + i, f"Flatmate {i + 1}") for i in range(rooms)]
        names = tuple(f"Room {i + 1}" for i in range(rooms))
        problem = Problem(RENT, names, tuple(str(m.user_id) for m in members))
        play = Rehearsal(
            engine, -1, members[0], members, random_tenants(problem, "quasi-linear", 1)
        )
        queue = list(await play.set_up(RENT_TEXT, names, one_by_one=one_by_one))
        times: list[float] = []
        while queue and len(times) < answers:
            message = queue.pop(0)
            if message.kind is not Kind.QUESTION:
                continue
            started = time.perf_counter()
            queue.extend(await play.answer(message))
            times.append(time.perf_counter() - started)
        async with store.transaction() as tx:
            record = await tx.latest_round(-1)
        size = len(record.walk_json or "") if record is not None else 0
        return times, size


def main(argv: Sequence[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description="Per-answer time as one long round grows.")
    parser.add_argument("--rooms", type=int, default=10, choices=range(2, 11))
    parser.add_argument("--answers", type=int, default=1100)
    parser.add_argument("--rounds-of-questions", action="store_true")
    args = parser.parse_args(argv)
    with tempfile.TemporaryDirectory() as folder:
        times, size = asyncio.run(
            bench(args.rooms, args.answers, not args.rounds_of_questions, Path(folder) / "b.db")
        )
    late = times[1000:] or times[len(times) // 2 :]
    print(f"{len(times)} answers, {args.rooms} rooms, stored search {size / 1024:.0f} KiB")
    print(
        f"answers {len(times) - len(late) + 1}-{len(times)}: median "
        f"{statistics.median(late) * 1000:.1f} ms, max {max(late) * 1000:.1f} ms"
    )
    print(f"all answers: median {statistics.median(times) * 1000:.1f} ms")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
