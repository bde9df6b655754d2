"""The demo's invented flat: its rooms, its flatmates and their hidden tastes.

Everything here is made up for the demo (no real flat, people or rent). The rooms differ
clearly in quality so the split has something to do; each simulated flatmate values the rooms
by that quality times a personal taste drawn from the seed, so runs repeat exactly.
"""

from __future__ import annotations

import random
from dataclasses import dataclass

from bot.demo.flatmates import Asked, Proposed
from solver.simulate import BudgetCapped, ConcaveInMoney, Model, QuasiLinear, Tenant

ADDRESS = "Flat 3, 41 Wren Terrace"
CURRENCY = "EUR"
DECIMALS = 2


@dataclass(frozen=True, slots=True)
class Room:
    """A room of the invented flat; ``quality`` scales what everyone thinks it is worth."""

    name: str
    about: str
    quality: float
    #: what the room adds to the rent, in cents (the rent is the sum for the rooms used)
    rent_part: int


ROOMS = (
    Room("Bay window", "18 m², bay window onto the square", 1.40, 690_00),
    Room("Box room", "8 m², window onto the light well", 0.60, 330_00),
    Room("Loft", "15 m², skylights and its own shower", 1.15, 610_00),
    Room("Courtyard", "12 m², quiet but dim", 0.85, 450_00),
    Room("Attic", "11 m², sloping ceiling", 0.75, 400_00),
    Room("Garden room", "14 m², door to the garden", 1.05, 560_00),
)
FLATMATES = ("Ines", "Tomasz", "Aroha", "Kwame", "Lidia", "Sven")


def rooms_for(count: int) -> tuple[Room, ...]:
    """The first ``count`` rooms (2 to 6)."""
    if not 2 <= count <= len(ROOMS):
        raise ValueError(f"the demo flat has 2 to {len(ROOMS)} rooms, not {count}")
    return ROOMS[:count]


def rent_for(rooms: tuple[Room, ...]) -> int:
    """The invented monthly rent in cents."""
    return sum(room.rent_part for room in rooms)


def invent_tenants(rooms: tuple[Room, ...], model: Model, seed: int) -> tuple[Tenant, ...]:
    """One simulated tenant per room, in flatmate order, with values summing to the rent.

    Like :func:`solver.simulate.random_tenants`, but the shared room quality is the flat's,
    not random: personal taste varies each room's worth by 25% either way.
    """
    rng = random.Random(seed)
    rent = rent_for(rooms)
    tenants: list[Tenant] = []
    for _ in rooms:
        raw = [room.quality * rng.uniform(0.75, 1.25) for room in rooms]
        values = tuple(v * rent / sum(raw) for v in raw)
        if model == "quasi-linear":
            tenants.append(QuasiLinear(values))
        elif model == "budget-capped":
            budget = rent * rng.randint(115, 140) // (100 * len(rooms))
            tenants.append(BudgetCapped(values, budget))
        else:
            wealth = rent * rng.uniform(3.0, 6.0)
            tenants.append(ConcaveInMoney(values, wealth, k=wealth))
    return tuple(tenants)


@dataclass(frozen=True, slots=True)
class SimulatedMind:
    """A flatmate who answers from hidden values and agrees to the suggested split."""

    tenant: Tenant
    floor: int = 0
    #: Rough values to give when invited, as typed (None: skip the invitation).
    rough: str | None = None

    async def pick_room(self, name: str, asked: Asked) -> int:
        return self.tenant.choose(asked.prices, sorted(asked.offered), self.floor)

    async def respond(self, name: str, proposed: Proposed) -> int | None:
        return None

    async def rough_values(self, name: str, rooms: tuple[str, ...]) -> str | None:
        return self.rough


def rough_text(tenant: Tenant, seed: int, noise: float = 0.10) -> str | None:
    """A flatmate's rough values as they might type them: their hidden values give or take
    ``noise`` (seeded), in whole euros, separated by commas. None for tenants without values."""
    values = getattr(tenant, "values", None)
    if values is None:
        return None
    rng = random.Random(seed)
    return ", ".join(str(round(v * rng.uniform(1 - noise, 1 + noise) / 100)) for v in values)
