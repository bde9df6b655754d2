"""The invented scenario shared by the engine tests: 7 Wren Yard, its rooms and its people."""

from __future__ import annotations

from collections.abc import Sequence

from bot.events import Actor
from solver import Problem
from solver.simulate import Tenant, random_tenants

# Invented flat for every test: 7 Wren Yard, its rooms and its people.
ROOMS = ("Bay window", "Loft", "Courtyard", "Box room", "Attic")
NAMES = ("Ines", "Tomasz", "Aroha", "Kwame", "Lidia")
RENT_TEXT = "1850.00 EUR"
RENT = 185_000
GROUP = -1001
SECRET = b"test-secret"


def people(count: int, first_id: int = 100) -> list[Actor]:
    return [Actor(first_id + i, NAMES[i]) for i in range(count)]


def tenants_for(members: Sequence[Actor], seed: int) -> dict[str, Tenant]:
    problem = Problem(RENT, ROOMS[: len(members)], [str(m.user_id) for m in members])
    return random_tenants(problem, "quasi-linear", seed)
