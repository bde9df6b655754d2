"""Benchmark: how many questions a round costs each member (``python -m solver.bench``).

Seeded simulated rounds for n = 2..6 rooms, three tenant models and several tolerances, with
baselines in the same run: the classical walk on one fixed mesh fine enough for the tolerance
(no refinement), and our walk with each improvement switched off. Prints a table and, with
``--json PATH``, writes the raw figures. A benchmark, not a test: nothing here asserts.

Figures per configuration: questions per member (a run's questions divided by its members;
median / p90 / max over seeds), the busiest member's questions (median), sequential waiting
rounds (batches of questions answered in parallel; without look-ahead every question is its
own round), the share of runs where every simulated tenant's envy is within the tolerance,
and compute time per question.
"""

from __future__ import annotations

import argparse
import json
import random
import statistics
import time
from collections.abc import Sequence
from concurrent.futures import ProcessPoolExecutor
from dataclasses import asdict, dataclass

from solver.bench_rounds import (
    SCENARIOS,
    measure_rounds,
    render_rounds,
    round_cpu_ms,
    rounds_plan,
)
from solver.problem import Problem
from solver.simulate import (
    MODELS,
    BudgetCapped,
    ConcaveInMoney,
    Model,
    QuasiLinear,
    Tenant,
    answer_until_proposal,
    random_tenants,
)
from solver.walk import Options, Walk
from solver.warm_start import WARM_FIRST_MESH_PER_ROOM, start_warm

RENT = 300_000
AWKWARD_RENT = 123_457


@dataclass(frozen=True)
class Config:
    """One row of the table."""

    variant: str
    n: int
    model: Model
    rent: int
    tolerance: int
    seeds: int
    options: Options
    warm_noise: float | None = None


@dataclass(frozen=True)
class Row:
    variant: str
    n: int
    model: str
    rent: int
    tolerance: int
    runs: int
    per_member_median: float
    per_member_p90: float
    per_member_max: float
    busiest_median: float
    waiting_median: float
    within_tolerance: float
    ms_per_question: float


def _one_run(config: Config, seed: int) -> tuple[float, int, int, bool, float, int]:
    problem = Problem(
        rent=config.rent,
        rooms=tuple(f"r{i}" for i in range(config.n)),
        members=tuple(f"m{i}" for i in range(config.n)),
        tolerance=config.tolerance,
    )
    tenants = random_tenants(problem, config.model, seed)
    started = time.perf_counter()
    if config.warm_noise is None:
        walk = Walk.start(problem, options=config.options)
    else:
        rough = rough_values(tenants, problem.members, config.warm_noise, seed)
        walk = start_warm(problem, rough, config.options)
    rounds = answer_until_proposal(walk, tenants)
    elapsed = time.perf_counter() - started
    proposal = walk.proposal()
    assert proposal is not None
    asked = walk.counters.asked
    busiest = max(walk.questions_per_member().values())
    fair = all(
        tenants[m].envy(proposal.prices, r) <= config.tolerance + 1e-6
        for m, r in proposal.assignment.items()
    )
    return asked / config.n, busiest, rounds, fair, elapsed / max(asked, 1), asked


def rough_values(
    tenants: dict[str, Tenant], members: Sequence[str], noise: float, seed: int
) -> list[list[float]]:
    """Each tenant's values with multiplicative noise in [1 - noise, 1 + noise] (seeded)."""
    rng = random.Random(f"rough:{seed}")
    rough = []
    for m in members:
        tenant = tenants[m]
        if not isinstance(tenant, QuasiLinear | BudgetCapped | ConcaveInMoney):
            raise TypeError(f"{type(tenant).__name__} has no values to be rough about")
        rough.append([v * rng.uniform(1 - noise, 1 + noise) for v in tenant.values])
    return rough


def _percentile(values: Sequence[float], q: float) -> float:
    ordered = sorted(values)
    return ordered[min(len(ordered) - 1, int(q * len(ordered)))]


def measure(config: Config) -> Row:
    """Run ``config.seeds`` seeded rounds and summarise them."""
    runs = [_one_run(config, seed) for seed in range(config.seeds)]
    per_member = [r[0] for r in runs]
    return Row(
        variant=config.variant,
        n=config.n,
        model=config.model,
        rent=config.rent,
        tolerance=config.tolerance,
        runs=len(runs),
        per_member_median=statistics.median(per_member),
        per_member_p90=_percentile(per_member, 0.9),
        per_member_max=max(per_member),
        busiest_median=statistics.median(r[1] for r in runs),
        waiting_median=statistics.median(r[2] for r in runs),
        within_tolerance=sum(r[3] for r in runs) / len(runs),
        ms_per_question=1000 * statistics.median(r[4] for r in runs),
    )


def fixed_mesh(rent: int, tolerance: int, n: int) -> Options:
    """The classical walk: one stage on a mesh whose spacing is a third of the tolerance."""
    mesh = -(-3 * rent // tolerance)
    return Options(first_mesh_per_room=-(-mesh // n), infer_from_money=False)


def configs(seeds: int, quick: bool) -> list[Config]:
    """The benchmark plan (``quick`` trims it for a smoke run)."""
    ours = Options()
    plain = Options(infer_from_money=False)
    sizes = range(2, 7) if not quick else (3, 4)
    out: list[Config] = []
    for n in sizes:
        for model in MODELS:
            for tolerance in (100, 500):
                s = seeds if model == "quasi-linear" and tolerance == 100 else max(seeds // 4, 5)
                out.append(Config("ours", n, model, RENT, tolerance, s, ours))
        out.append(Config("ours", n, "quasi-linear", AWKWARD_RENT, 100, max(seeds // 4, 5), ours))
        out.append(Config("no inference", n, "quasi-linear", RENT, 100, seeds, plain))
        out.append(
            Config("look ahead", n, "quasi-linear", RENT, 100, seeds, Options(look_ahead=True))
        )
        warm = Options(first_mesh_per_room=WARM_FIRST_MESH_PER_ROOM)
        out.append(Config("warm start", n, "quasi-linear", RENT, 100, seeds, warm, 0.1))
        out.append(Config("warm start", n, "concave", RENT, 100, max(seeds // 4, 5), warm, 0.1))
        for first in (8, 32):  # warm start's first mesh per room
            out.append(
                Config(
                    f"warm start, first mesh {first}n",
                    n,
                    "quasi-linear",
                    RENT,
                    100,
                    max(seeds // 4, 5),
                    Options(first_mesh_per_room=first),
                    0.1,
                )
            )
        for factor in (2, 3, 4, n + 1, 8):
            tuned = Options(factor=factor)
            out.append(
                Config(f"factor {factor}", n, "quasi-linear", RENT, 100, max(seeds // 4, 5), tuned)
            )
        if 3 <= n <= 5:  # n = 6 on a fixed mesh takes hours of simulated questions
            classic_seeds = 3 if n <= 4 else 1
            out.append(
                Config(
                    "fixed mesh",
                    n,
                    "quasi-linear",
                    RENT,
                    100,
                    classic_seeds,
                    fixed_mesh(RENT, 100, n),
                )
            )
    return out


def render(rows: Sequence[Row]) -> str:
    """A Markdown table (the README pastes it)."""
    head = (
        "| variant | n | tenants | rent | tol | runs | q/member median | p90 | max "
        "| busiest median | waiting median | envy within tol | ms/question |"
    )
    lines = [head, "|" + " --- |" * 13]
    for r in rows:
        lines.append(
            f"| {r.variant} | {r.n} | {r.model} | {r.rent / 100:.2f} | {r.tolerance / 100:.2f} "
            f"| {r.runs} | {r.per_member_median:.1f} | {r.per_member_p90:.1f} "
            f"| {r.per_member_max:.1f} | {r.busiest_median:.0f} | {r.waiting_median:.0f} "
            f"| {100 * r.within_tolerance:.0f}% | {r.ms_per_question:.2f} |"
        )
    return "\n".join(lines)


def rerun_questions(seed: int, reuse: bool) -> float:
    """Questions per staying member when one of four members is replaced and the round re-run."""
    rooms = ("r0", "r1", "r2", "r3")
    before = Problem(rent=RENT, rooms=rooms, members=("a", "b", "c", "d"))
    after = Problem(rent=RENT, rooms=rooms, members=("a", "b", "c", "e"))
    tenants = random_tenants(before, "quasi-linear", seed)
    tenants["e"] = random_tenants(after, "quasi-linear", seed + 10_000)["e"]
    first = Walk.start(before)
    answer_until_proposal(first, tenants)
    earlier = {
        m: [(r.prices, r.room) for r in first.records if r.member == m and r.source == "asked"]
        for m in ("a", "b", "c")
    }
    second = Walk.start(after, earlier=earlier if reuse else None)
    answer_until_proposal(second, tenants)
    asked = second.questions_per_member()
    return (asked["a"] + asked["b"] + asked["c"]) / 3


def rerun_report(seeds: int) -> str:
    """One line: what reusing staying members' answers saves in a re-run after a move."""
    fresh = [rerun_questions(s, reuse=False) for s in range(seeds)]
    reused = [rerun_questions(s, reuse=True) for s in range(seeds)]
    return (
        f"Re-run after one of four members moves out ({seeds} seeds, tolerance 1.00 on "
        f"3000.00): questions per staying member, median {statistics.median(fresh):.1f} fresh "
        f"vs {statistics.median(reused):.1f} reusing earlier answers (mean "
        f"{statistics.mean(fresh):.2f} vs {statistics.mean(reused):.2f})."
    )


def main(argv: Sequence[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--seeds", type=int, default=200, help="seeds for the headline rows")
    parser.add_argument("--quick", action="store_true", help="a small smoke run")
    parser.add_argument("--json", metavar="PATH", help="also write the rows as JSON")
    parser.add_argument("--workers", type=int, default=2)
    rounds = parser.add_argument_group("rounds table (parallel search and walk side by side)")
    rounds.add_argument("--rounds", action="store_true", help="run the rounds table instead")
    rounds.add_argument("--scenarios", default=",".join(SCENARIOS), help="comma-separated")
    rounds.add_argument("--sizes", default="", help="room counts, e.g. 4,6 (default per scenario)")
    rounds.add_argument("--walk-sizes", default="4,6", help="room counts with the walk alongside")
    rounds.add_argument("--rough", choices=("both", "no", "yes"), default="both")
    rounds.add_argument("--timing", action="store_true", help="CPU ms per round, 4-10 rooms")
    args = parser.parse_args(argv)
    if args.workers > 2:
        parser.error("at most 2 worker processes: the machine is shared")
    if args.timing:
        for n in (4, 6, 8, 10):
            median, p90, worst = round_cpu_ms(n, max(args.seeds // 10, 2))
            print(
                f"{n} rooms: CPU ms per round median {median:.1f} / p90 {p90:.1f} / max {worst:.1f}"
            )
        return 0
    if args.rounds:
        return rounds_main(args)
    plan = configs(args.seeds, args.quick)
    started = time.perf_counter()
    with ProcessPoolExecutor(max_workers=args.workers) as pool:
        rows = list(pool.map(measure, plan))
    print(render(rows))
    print()
    print(rerun_report(args.seeds // 4 if not args.quick else 10))
    print(f"\n{len(plan)} configurations in {time.perf_counter() - started:.0f} s")
    if args.json:
        with open(args.json, "w", encoding="utf-8") as fh:
            json.dump([asdict(r) for r in rows], fh, indent=1)
    return 0


def rounds_main(args: argparse.Namespace) -> int:
    """The rounds table: parallel search vs walk (``--rounds``)."""
    sizes = [int(x) for x in args.sizes.split(",") if x]
    rough = {"both": [False, True], "no": [False], "yes": [True]}[args.rough]
    plan = rounds_plan(
        args.seeds,
        args.scenarios.split(","),
        sizes or None,
        [int(x) for x in args.walk_sizes.split(",") if x],
        rough,
    )
    started = time.perf_counter()
    with ProcessPoolExecutor(max_workers=args.workers) as pool:
        rows = list(pool.map(measure_rounds, plan))
    print(render_rounds(rows))
    print(f"\n{len(plan)} configurations in {time.perf_counter() - started:.0f} s")
    if args.json:
        with open(args.json, "w", encoding="utf-8") as fh:
            json.dump([asdict(r) for r in rows], fh, indent=1)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
