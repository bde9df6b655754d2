"""The engine tests' scenario: the demo's invented flat (bot/demo/flat.py), rooms and people."""

from __future__ import annotations

from collections.abc import Sequence

from bot.demo.flat import FLATMATES
from bot.demo.flat import ROOMS as DEMO_ROOMS
from bot.rounds.events import Actor
from solver import Problem
from solver.simulate import Tenant, random_tenants

ROOMS = tuple(room.name for room in DEMO_ROOMS)
NAMES = FLATMATES
RENT_TEXT = "1850.00 EUR"
RENT = 185_000
GROUP = -1001
SECRET = b"test-secret"


def people(count: int, first_id: int = 100) -> list[Actor]:
    return [Actor(first_id + i, NAMES[i]) for i in range(count)]


def tenants_for(members: Sequence[Actor], seed: int) -> dict[str, Tenant]:
    problem = Problem(RENT, ROOMS[: len(members)], [str(m.user_id) for m in members])
    return random_tenants(problem, "quasi-linear", seed)
