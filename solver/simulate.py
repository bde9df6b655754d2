"""Simulated tenants and a driver that lets them answer a walk's questions.

Used by tests, the benchmark and the demo. Every tenant obeys the standard assumptions the
bot states to people: offered a room at the floor price they take one of those rooms
("miserly"), and cheaper is never worse. Randomness comes only from the ``seed`` arguments.

Models:

* :class:`QuasiLinear` — a money value per room; utility is value minus price.
* :class:`BudgetCapped` — quasi-linear, but rooms priced above a personal budget are out of
  reach (taken only when every offered room is).
* :class:`ConcaveInMoney` — a value per room plus ``k * log(wealth - price)``: money matters
  more when less is left, so choices shift with the price level, not only with differences.

* :func:`tie_tenants` — quasi-linear, with two identical rooms and two identical flatmates.
* :class:`Noisy` — quasi-linear, but now and then answers the second-best room when the two
  are close (a person who is not sure).

``envy(prices, room)`` is the money-metric envy: the most the tenant would pay on top of
another room's price to swap into it (0 when they prefer their own room).
"""

from __future__ import annotations

import math
import random
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Literal, Protocol

from solver.problem import Problem
from solver.search import Search
from solver.walk import Options, Proposal, Walk

Model = Literal["quasi-linear", "budget-capped", "concave"]
MODELS: tuple[Model, ...] = ("quasi-linear", "budget-capped", "concave")


class Tenant(Protocol):
    """Anything that can answer "at these prices, which of these rooms would you take?"."""

    def choose(self, prices: Sequence[int], choices: Sequence[int], floor: int) -> int: ...

    def envy(self, prices: Sequence[int], room: int) -> float: ...


def _miserly(prices: Sequence[int], choices: Sequence[int], floor: int) -> list[int]:
    """The rooms a tenant considers: only floor-priced ones when any is offered."""
    at_floor = [c for c in choices if prices[c] == floor]
    return at_floor or list(choices)


@dataclass(frozen=True)
class QuasiLinear:
    """Utility of room ``j`` at price ``p`` is ``values[j] - p`` (minor units)."""

    values: tuple[float, ...]

    def utility(self, room: int, price: float) -> float:
        return self.values[room] - price

    def choose(self, prices: Sequence[int], choices: Sequence[int], floor: int) -> int:
        options = _miserly(prices, choices, floor)
        return max(options, key=lambda j: (self.utility(j, prices[j]), -j))

    def envy(self, prices: Sequence[int], room: int) -> float:
        own = self.utility(room, prices[room])
        return max(0.0, max(self.utility(j, prices[j]) for j in range(len(prices))) - own)


@dataclass(frozen=True)
class BudgetCapped:
    """Quasi-linear within ``budget``; rooms above it are out of reach."""

    values: tuple[float, ...]
    budget: int

    def choose(self, prices: Sequence[int], choices: Sequence[int], floor: int) -> int:
        options = _miserly(prices, choices, floor)
        affordable = [j for j in options if prices[j] <= self.budget] or [
            min(options, key=lambda j: (prices[j], j))
        ]
        return max(affordable, key=lambda j: (self.values[j] - prices[j], -j))

    def envy(self, prices: Sequence[int], room: int) -> float:
        own = self.values[room] - prices[room]
        others = [
            self.values[j] - prices[j] for j in range(len(prices)) if prices[j] <= self.budget
        ]
        return max(0.0, max(others, default=own) - own)


@dataclass(frozen=True)
class ConcaveInMoney:
    """Utility ``values[j] + k * log(wealth - price)``; ``wealth`` exceeds every price."""

    values: tuple[float, ...]
    wealth: float
    k: float

    def utility(self, room: int, price: float) -> float:
        return self.values[room] + self.k * math.log(self.wealth - price)

    def choose(self, prices: Sequence[int], choices: Sequence[int], floor: int) -> int:
        options = _miserly(prices, choices, floor)
        return max(options, key=lambda j: (self.utility(j, prices[j]), -j))

    def envy(self, prices: Sequence[int], room: int) -> float:
        own = self.utility(room, prices[room])
        worst = 0.0
        for j, p in enumerate(prices):
            # extra payment e with utility(j, p + e) == own, solved in closed form
            extra = (self.wealth - p) - math.exp((own - self.values[j]) / self.k)
            worst = max(worst, extra)
        return worst


@dataclass(frozen=True)
class RandomAnswers:
    """An adversary: a fixed but arbitrary room per (member, prices), obeying the choices.

    The walk's termination guarantee must hold for *any* answers that obey the boundary rule;
    this tenant exercises that. It has no envy (it has no values).
    """

    seed: int
    member: str

    def choose(self, prices: Sequence[int], choices: Sequence[int], floor: int) -> int:
        rng = random.Random(f"{self.seed}:{self.member}:{tuple(prices)}")
        return rng.choice(list(choices))

    def envy(self, prices: Sequence[int], room: int) -> float:
        return 0.0


@dataclass(frozen=True)
class Noisy:
    """A quasi-linear tenant who is sometimes unsure.

    When the best and second-best offered rooms are within ``closeness`` (minor units) of
    each other, they answer the second-best with probability ``slip``. The draw is seeded by
    ``(seed, member, prices)``, so the same question gets the same answer. Envy is measured by
    the true values.
    """

    values: tuple[float, ...]
    seed: int
    member: str
    closeness: float
    slip: float = 0.05

    def choose(self, prices: Sequence[int], choices: Sequence[int], floor: int) -> int:
        options = _miserly(prices, choices, floor)
        ranked = sorted(options, key=lambda j: (-(self.values[j] - prices[j]), j))
        if len(ranked) < 2:
            return ranked[0]
        gap = (self.values[ranked[0]] - prices[ranked[0]]) - (
            self.values[ranked[1]] - prices[ranked[1]]
        )
        rng = random.Random(f"noisy:{self.seed}:{self.member}:{tuple(prices)}")
        if gap <= self.closeness and rng.random() < self.slip:
            return ranked[1]
        return ranked[0]

    def envy(self, prices: Sequence[int], room: int) -> float:
        return QuasiLinear(self.values).envy(prices, room)


def noisy_tenants(problem: Problem, seed: int) -> dict[str, Tenant]:
    """:class:`Noisy` tenants: 5% slips when two rooms are within 2% of an equal share."""
    share = problem.rent / len(problem.members)
    base = random_tenants(problem, "quasi-linear", seed)
    return {m: Noisy(values_of(t), seed, m, closeness=0.02 * share) for m, t in base.items()}


def tie_tenants(problem: Problem, seed: int) -> dict[str, Tenant]:
    """Quasi-linear tenants where rooms 0 and 1 are identical and members 0 and 1 too.

    Identical rooms: every member values rooms 0 and 1 the same. Identical flatmates: the
    first two members have the same values. At any common price list they answer alike, which
    is what the near-tie rounds are for.
    """
    tenants = random_tenants(problem, "quasi-linear", seed)
    rows = []
    for m in problem.members:
        values = list(values_of(tenants[m]))
        values[0] = values[1] = (values[0] + values[1]) / 2
        rows.append(tuple(values))
    rows[1] = rows[0]
    return {m: QuasiLinear(row) for m, row in zip(problem.members, rows, strict=True)}


def values_of(tenant: Tenant) -> tuple[float, ...]:
    if not isinstance(tenant, QuasiLinear | BudgetCapped | ConcaveInMoney | Noisy):
        raise TypeError(f"{type(tenant).__name__} has no values")
    return tenant.values


def random_tenants(problem: Problem, model: Model, seed: int) -> dict[str, Tenant]:
    """Tenants with plausible tastes: rooms differ in quality, people differ in taste.

    Each member's values add up to the rent, with a shared room quality in [0.6, 1.4] and a
    personal factor in [0.75, 1.25]. Budget caps sit 15-40% above an equal share; concave
    tenants have wealth of 3-6 rents.
    """
    rng = random.Random(seed)
    n = problem.size
    quality = [rng.uniform(0.6, 1.4) for _ in range(n)]
    tenants: dict[str, Tenant] = {}
    for member in problem.members:
        raw = [q * rng.uniform(0.75, 1.25) for q in quality]
        scale = problem.rent / sum(raw)
        values = tuple(v * scale for v in raw)
        if model == "quasi-linear":
            tenants[member] = QuasiLinear(values)
        elif model == "budget-capped":
            budget = round(problem.rent / n * rng.uniform(1.15, 1.4))
            tenants[member] = BudgetCapped(values, budget)
        else:
            wealth = problem.rent * rng.uniform(3.0, 6.0)
            tenants[member] = ConcaveInMoney(values, wealth, k=wealth)
    return tenants


@dataclass(frozen=True)
class RunResult:
    """What a simulated round produced."""

    proposal: Proposal
    walk: Walk
    questions_per_member: Mapping[str, int]
    envy: Mapping[str, float]
    waiting_rounds: int


def run(
    problem: Problem,
    tenants: Mapping[str, Tenant],
    *,
    options: Options | None = None,
    start_prices: Sequence[int] | None = None,
    max_questions: int = 100_000,
) -> RunResult:
    """Let ``tenants`` answer every question until the walk proposes a division."""
    walk = Walk.start(problem, options=options, start_prices=start_prices)
    rounds = answer_until_proposal(walk, tenants, max_questions=max_questions)
    proposal = walk.proposal()
    assert proposal is not None
    envy = {m: tenants[m].envy(proposal.prices, r) for m, r in proposal.assignment.items()}
    return RunResult(proposal, walk, walk.questions_per_member(), envy, rounds)


def answer_until_proposal(
    walk: Walk, tenants: Mapping[str, Tenant], *, max_questions: int = 100_000
) -> int:
    """Answer in *waiting rounds*: everyone with an open question answers, then the walk moves.

    Look-ahead questions are answered before the walk's own question of the round (people
    answer in parallel; the order within a round does not matter to them, but answering the
    walk's question first would withdraw the guesses before they count). Returns the number
    of rounds.
    """
    rounds = 0
    floor = walk.problem.floor
    while walk.proposal() is None:
        rounds += 1
        batch = walk.open_questions()
        for question in reversed(batch):
            if question in walk.open_questions():
                tenant = tenants[question.member]
                walk.answer(question.id, tenant.choose(question.prices, question.choices, floor))
        if walk.counters.asked > max_questions:
            raise RuntimeError(f"simulated round exceeded {max_questions} questions")
    return rounds


def answer_in_rounds(
    search: Search, tenants: Mapping[str, Tenant], *, max_rounds: int = 100_000
) -> int:
    """Answer any search in *waiting rounds*: every open question is answered, then the next.

    Works for the parallel search (a round is all its open questions) and for the walk (one
    question, or a few with look-ahead). Returns the number of waiting rounds.
    """
    rounds = 0
    floor = search.problem.floor
    while search.proposal() is None:
        rounds += 1
        if rounds > max_rounds:
            raise RuntimeError(f"simulated search exceeded {max_rounds} rounds")
        for question in list(reversed(search.open_questions())):
            if question in search.open_questions():
                tenant = tenants[question.member]
                search.answer(question.id, tenant.choose(question.prices, question.choices, floor))
    return rounds
