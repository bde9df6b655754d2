"""Benchmark (a script, not a test): what changing an answer costs as a round grows.

``python -m bot.bench.change_answer --rooms 6 --answers 60`` answers that many questions of
one search with simulated tenants (seeded), then changes one answer (the first, the middle
one and the last) with :func:`bot.rounds.replay.rebuild` and prints how long each rebuild
took, how many later answers it set aside and how many it kept as facts (the parallel
method keeps answers whose question is gone as facts), for both methods. The rebuild replays the
stored answers twice (the original beside the changed one), in the press's worker thread.
"""

from __future__ import annotations

import argparse
import time
from collections.abc import Sequence

from bot.rounds.replay import answer_index, events_of, rebuild
from bot.rounds.searches import AnySearch
from solver import Problem, start
from solver.simulate import random_tenants


def _play(search: AnySearch, problem: Problem, answers: int, seed: int) -> list[str]:
    tenants = random_tenants(problem, "quasi-linear", seed)
    asked: list[str] = []
    while search.proposal() is None and len(asked) < answers:
        question = search.open_questions()[0]
        search.answer(
            question.id, tenants[question.member].choose(question.prices, question.choices, 0)
        )
        asked.append(question.id)
    return asked


def main(argv: Sequence[str] | None = None) -> None:
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--rooms", type=int, default=6)
    parser.add_argument("--answers", type=int, default=60)
    parser.add_argument("--seed", type=int, default=1)
    args = parser.parse_args(argv)
    rooms = tuple(f"Room {i + 1}" for i in range(args.rooms))
    members = tuple(str(i + 1) for i in range(args.rooms))
    problem = Problem(300_000, rooms, members)
    for method in ("parallel", "walk"):
        search = start(problem, method="walk" if method == "walk" else "parallel")
        asked = _play(search, problem, args.answers, args.seed)
        for which, qid in (
            ("first", asked[0]),
            ("middle", asked[len(asked) // 2]),
            ("last", asked[-1]),
        ):
            index = answer_index(search, qid)
            assert index is not None
            old_room = int(events_of(search)[index][2])
            question_rooms = [r for r in range(args.rooms) if r != old_room]
            began = time.perf_counter()
            result = rebuild(search, index, question_rooms[0])
            took = time.perf_counter() - began
            print(
                f"{method:8} {args.rooms} rooms, {len(asked)} answers: change the {which:6} "
                f"answer: {took * 1000:7.1f} ms, {len(result.dropped_answers)} set aside, "
                f"{len(result.kept_answers)} kept as facts"
            )


if __name__ == "__main__":
    main()
