"""Benchmark of waiting rounds: the parallel search and the walk side by side.

``python -m solver.bench --rounds`` (see ``--help`` for subsets). Seeded simulated flats,
rent 3000.00, tolerance 1.00, the same tenants for both methods. A benchmark, not a test:
nothing here asserts.

Per configuration and method: waiting rounds (a round is every open question answered once;
for the walk each question is its own round) and questions per member (a run's questions
divided by its members), median / p90 / max over seeds; the share of runs whose final
division is within the tolerance by the tenants' *true* values; the share ending in an exact
certificate (everyone chose their room at exactly the proposed prices); the
share handed over to the walk; and time per round (median over runs of the run's total wall
time, simulated tenants included, divided by its rounds; on a shared machine this includes
waiting for the CPU). ``--timing`` measures the CPU time of the call that closes a round.
"""

from __future__ import annotations

import random
import statistics
import time
from collections.abc import Sequence
from dataclasses import dataclass

from solver.parallel import ParallelSearch
from solver.problem import Problem
from solver.search import start
from solver.search_checks import exact_certificate
from solver.simulate import (
    Tenant,
    answer_in_rounds,
    noisy_tenants,
    random_tenants,
    tie_tenants,
    values_of,
)
from solver.walk import Walk
from solver.warm_start import start_warm

RENT = 300_000
TOLERANCE = 100
ROUGH_NOISE = 0.1
SCENARIOS = ("quasi-linear", "budget-capped", "concave", "ties", "noisy")


@dataclass(frozen=True)
class RoundsConfig:
    scenario: str
    n: int
    rough: bool
    method: str
    seeds: int


@dataclass(frozen=True)
class RoundsRow:
    scenario: str
    n: int
    rough: bool
    method: str
    runs: int
    rounds: tuple[float, float, float]
    per_member: tuple[float, float, float]
    within_tolerance: float
    exact: float
    handed_over: float
    ms_per_round: float


def tenants_for(problem: Problem, scenario: str, seed: int) -> dict[str, Tenant]:
    if scenario == "ties":
        return tie_tenants(problem, seed)
    if scenario == "noisy":
        return noisy_tenants(problem, seed)
    if scenario in ("quasi-linear", "budget-capped", "concave"):
        return random_tenants(problem, scenario, seed)  # type: ignore[arg-type]
    raise ValueError(f"unknown scenario {scenario!r}")


def rough_for(tenants: dict[str, Tenant], members: Sequence[str], seed: int) -> list[list[float]]:
    """True values with multiplicative noise in [0.9, 1.1] (seeded), as members would guess."""
    rng = random.Random(f"rough:{seed}")
    return [
        [v * rng.uniform(1 - ROUGH_NOISE, 1 + ROUGH_NOISE) for v in values_of(tenants[m])]
        for m in members
    ]


def one_run(config: RoundsConfig, seed: int) -> tuple[int, float, bool, bool, bool, float]:
    problem = Problem(
        rent=RENT,
        rooms=tuple(f"r{i}" for i in range(config.n)),
        members=tuple(f"m{i}" for i in range(config.n)),
        tolerance=TOLERANCE,
    )
    tenants = tenants_for(problem, config.scenario, seed)
    rough = rough_for(tenants, problem.members, seed) if config.rough else None
    started = time.perf_counter()
    search: ParallelSearch | Walk
    if config.method == "walk":
        search = start_warm(problem, rough) if rough is not None else Walk.start(problem)
    else:
        search = start(problem, rough_values=rough)
    rounds = answer_in_rounds(search, tenants)
    elapsed = time.perf_counter() - started
    proposal = search.proposal()
    assert proposal is not None
    fair = all(
        tenants[m].envy(proposal.prices, r) <= TOLERANCE + 1e-6
        for m, r in proposal.assignment.items()
    )
    handed = getattr(search, "walk", None) is not None
    per_member = search.counters.asked / config.n
    exact = exact_certificate(proposal)
    return rounds, per_member, fair, exact, handed, elapsed / rounds


def _percentile(values: Sequence[float], q: float) -> float:
    ordered = sorted(values)
    return ordered[min(len(ordered) - 1, int(q * len(ordered)))]


def _spread(values: Sequence[float]) -> tuple[float, float, float]:
    return statistics.median(values), _percentile(values, 0.9), max(values)


def measure_rounds(config: RoundsConfig) -> RoundsRow:
    runs = [one_run(config, seed) for seed in range(config.seeds)]
    return RoundsRow(
        scenario=config.scenario,
        n=config.n,
        rough=config.rough,
        method=config.method,
        runs=len(runs),
        rounds=_spread([r[0] for r in runs]),
        per_member=_spread([r[1] for r in runs]),
        within_tolerance=sum(r[2] for r in runs) / len(runs),
        exact=sum(r[3] for r in runs) / len(runs),
        handed_over=sum(r[4] for r in runs) / len(runs),
        ms_per_round=1000 * statistics.median(r[5] for r in runs),
    )


def rounds_plan(
    seeds: int,
    scenarios: Sequence[str],
    sizes: Sequence[int] | None,
    walk_sizes: Sequence[int],
    rough: Sequence[bool],
) -> list[RoundsConfig]:
    """Quasi-linear at 4, 6, 8, 10 rooms; the other scenarios at 4 and 6; walk alongside."""
    out: list[RoundsConfig] = []
    for scenario in scenarios:
        default = (4, 6, 8, 10) if scenario == "quasi-linear" else (4, 6)
        for n in sizes or default:
            for with_rough in rough:
                out.append(RoundsConfig(scenario, n, with_rough, "parallel", seeds))
                if n in walk_sizes:
                    out.append(RoundsConfig(scenario, n, with_rough, "walk", seeds))
    return out


def render_rounds(rows: Sequence[RoundsRow]) -> str:
    head = (
        "| tenants | rooms | rough | method | runs | rounds median / p90 / max "
        "| q/member median / p90 / max | within tol | exact | to walk | ms/round |"
    )
    lines = [head, "|" + " --- |" * 11]
    for r in rows:
        lines.append(
            f"| {r.scenario} | {r.n} | {'yes' if r.rough else 'no'} | {r.method} | {r.runs} "
            f"| {r.rounds[0]:.0f} / {r.rounds[1]:.0f} / {r.rounds[2]:.0f} "
            f"| {r.per_member[0]:.1f} / {r.per_member[1]:.1f} / {r.per_member[2]:.1f} "
            f"| {100 * r.within_tolerance:.1f}% | {100 * r.exact:.0f}% "
            f"| {100 * r.handed_over:.0f}% | {r.ms_per_round:.1f} |"
        )
    return "\n".join(lines)


def round_cpu_ms(n: int, seeds: int) -> tuple[float, float, float]:
    """CPU milliseconds of the answer that closes a round (where the next one is planned)."""
    problem = Problem(
        rent=RENT,
        rooms=tuple(f"r{i}" for i in range(n)),
        members=tuple(f"m{i}" for i in range(n)),
        tolerance=TOLERANCE,
    )
    spent: list[float] = []
    for seed in range(seeds):
        tenants = random_tenants(problem, "quasi-linear", seed)
        search = start(problem)
        while search.proposal() is None:
            questions = search.open_questions()
            for q in questions[:-1]:
                search.answer(q.id, tenants[q.member].choose(q.prices, q.choices, 0))
            last = questions[-1]
            room = tenants[last.member].choose(last.prices, last.choices, 0)
            begun = time.process_time()
            search.answer(last.id, room)
            spent.append(1000 * (time.process_time() - begun))
    return _spread(spent)
