"""Benchmark (a script, not a test): many simulated rounds at once through one engine.

``python -m bot.bench.engine --rounds 100 --rooms 4`` plays that many invented flats
concurrently on a fresh SQLite file and prints rounds/second and answers/second. Every answer
is a committed ``BEGIN IMMEDIATE`` transaction (WAL, synchronous=FULL).
"""

from __future__ import annotations

import argparse
import asyncio
import tempfile
import time
from collections.abc import Sequence
from pathlib import Path

from bot.rounds.clock import ManualClock
from bot.rounds.context import EngineConfig
from bot.rounds.engine import Engine
from bot.rounds.events import Actor
from bot.rounds.simulated_rounds import Rehearsal
from bot.storage.sqlite import SqliteStore
from solver import Problem
from solver.simulate import random_tenants

ROOMS = ("Bay window", "Loft", "Courtyard", "Box room", "Attic", "Garden room")


async def bench(rounds: int, rooms: int, path: Path) -> tuple[float, int]:
    clock = ManualClock()
    async with await SqliteStore.open(path, clock=clock) as store:
        engine = Engine(store, clock=clock, config=EngineConfig(token_secret=b"bench"))
        plays = []
        for group in range(rounds):
            members = [Actor(group * 100 + i, f"Flatmate {i + 1}") for i in range(rooms)]
            problem = Problem(185_000, ROOMS[:rooms], tuple(str(m.user_id) for m in members))
            tenants = random_tenants(problem, "quasi-linear", seed=group)
            plays.append(Rehearsal(engine, -group - 1, members[0], members, tenants))
        started = time.perf_counter()
        openings = await asyncio.gather(*(p.set_up("1850.00 EUR", ROOMS[:rooms]) for p in plays))
        await asyncio.gather(*(p.play(o) for p, o in zip(plays, openings, strict=True)))
        return time.perf_counter() - started, sum(p.answers for p in plays)


def main(argv: Sequence[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description="Concurrent simulated rounds on SQLite.")
    parser.add_argument("--rounds", type=int, default=100)
    parser.add_argument("--rooms", type=int, default=4, choices=range(2, 7))
    args = parser.parse_args(argv)
    with tempfile.TemporaryDirectory() as folder:
        seconds, answers = asyncio.run(bench(args.rounds, args.rooms, Path(folder) / "b.sqlite3"))
    print(f"{args.rounds} rounds of {args.rooms} rooms, {answers} answers in {seconds:.2f} s")
    print(f"{args.rounds / seconds:.1f} rounds/s, {answers / seconds:.0f} answers/s")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
