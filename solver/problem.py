"""A rent-division problem: who, which rooms, how much, and how precise.

Validation lives here so that every caller (the bot, the benchmark, tests) gets the same
checks and the same plain-language messages.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from solver.errors import InvalidProblem

#: Placeholders for empty rooms start with a character no member name may contain.
PLACEHOLDER = "\x00empty-"
MIN_ROOMS = 2
MAX_ROOMS = 10
MAX_NAME_LENGTH = 40
#: The smallest tolerance the walk can always honour: at the finest mesh (one minor unit)
#: two vertices of a cell differ by at most one unit per room, so the envy bound is <= 2.
MIN_TOLERANCE = 2
#: Default tolerance: one major unit of a two-decimal currency (1.00).
DEFAULT_TOLERANCE = 100


@dataclass(frozen=True, slots=True)
class Problem:
    """The data of one division round, all money in integer minor units.

    ``floor`` is the lowest price any room may get: 0 means rooms can be free but never paid
    for; a negative floor allows rebates (the others pay someone to take a poor room).
    ``tolerance`` is the promise to members: at the proposed prices nobody's envy, measured in
    money for a member whose choice moves the usual way with prices, exceeds it.
    """

    rent: int
    rooms: tuple[str, ...]
    members: tuple[str, ...]
    tolerance: int = DEFAULT_TOLERANCE
    floor: int = 0

    def __post_init__(self) -> None:
        object.__setattr__(self, "rooms", tuple(self.rooms))
        object.__setattr__(self, "members", tuple(self.members))
        _validate(self)

    @property
    def size(self) -> int:
        """Number of rooms (at least the number of members)."""
        return len(self.rooms)

    @property
    def empty_count(self) -> int:
        """How many rooms will stay empty (rooms minus members)."""
        return len(self.rooms) - len(self.members)

    @property
    def agents(self) -> tuple[str, ...]:
        """Members, then one placeholder per room that stays empty (see :func:`is_placeholder`).

        With more rooms than members the walk lets placeholders "take" the rooms that stay
        empty: a placeholder always takes the cheapest room, so in the final cell the empty
        rooms are the cheapest ones (the reduction to equal numbers by fictitious agents with
        no preferences, as in Alkan, Demange & Gale, "Fair allocation of indivisible goods and
        money and criteria of justice", Econometrica 59, 1991).
        """
        return self.members + tuple(f"{PLACEHOLDER}{k}" for k in range(self.empty_count))

    @property
    def budget(self) -> int:
        """The part of the rent above the floors: ``rent - members * floor`` (always > rooms)."""
        return self.rent - len(self.members) * self.floor

    def to_dict(self) -> dict[str, Any]:
        return {
            "rent": self.rent,
            "rooms": list(self.rooms),
            "members": list(self.members),
            "tolerance": self.tolerance,
            "floor": self.floor,
        }

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> Problem:
        return cls(
            rent=data["rent"],
            rooms=data["rooms"],
            members=data["members"],
            tolerance=data["tolerance"],
            floor=data["floor"],
        )


def is_placeholder(agent: str) -> bool:
    """True for the stand-in agent of a room that stays empty (never a real member)."""
    return agent.startswith(PLACEHOLDER)


def _is_int(value: object) -> bool:
    return isinstance(value, int) and not isinstance(value, bool)


def _validate(p: Problem) -> None:
    if not _is_int(p.rent) or p.rent <= 0:
        raise InvalidProblem(f"rent must be a positive whole number of minor units, not {p.rent!r}")
    _validate_names(p.rooms, "room")
    _validate_names(p.members, "member")
    if not MIN_ROOMS <= len(p.rooms) <= MAX_ROOMS:
        raise InvalidProblem(
            f"a round needs {MIN_ROOMS} to {MAX_ROOMS} rooms, not {len(p.rooms)}; "
            "split the flat into two rounds or merge rooms that are let together"
        )
    if len(p.members) > len(p.rooms):
        raise InvalidProblem(
            f"there are {len(p.rooms)} rooms but {len(p.members)} members; "
            "every member needs a room of their own: add rooms or split the group"
        )
    if len(p.members) < MIN_ROOMS:
        raise InvalidProblem(f"a round needs at least {MIN_ROOMS} members, not {len(p.members)}")
    if not _is_int(p.tolerance) or p.tolerance < MIN_TOLERANCE:
        raise InvalidProblem(
            f"tolerance must be at least {MIN_TOLERANCE} minor units, not {p.tolerance!r}"
        )
    if not _is_int(p.floor):
        raise InvalidProblem(f"floor must be a whole number of minor units, not {p.floor!r}")
    if p.rent - len(p.members) * p.floor <= len(p.rooms):
        raise InvalidProblem(
            f"the floor {p.floor} is too high for rent {p.rent} with {len(p.members)} members; "
            "lower the floor so that the let rooms together can cost more than the floors"
        )


def _validate_names(names: tuple[str, ...], what: str) -> None:
    for name in names:
        if not isinstance(name, str) or not name.strip():
            raise InvalidProblem(f"every {what} needs a non-empty name, got {name!r}")
        if not name.isprintable():
            raise InvalidProblem(f"{what} name {name!r} contains control characters; remove them")
        if len(name) > MAX_NAME_LENGTH:
            raise InvalidProblem(
                f"{what} name {name[:20]!r}... is longer than {MAX_NAME_LENGTH} characters; "
                "use a shorter name"
            )
    folded = [n.strip().casefold() for n in names]
    duplicates = sorted({n for n in folded if folded.count(n) > 1})
    if duplicates:
        raise InvalidProblem(f"{what} names must differ; repeated: {', '.join(duplicates)}")
