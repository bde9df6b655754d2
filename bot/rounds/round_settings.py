"""A round's settings (a value type) and how set-up input becomes them.

The input arrives already parsed (:class:`~bot.rounds.setup_input.SetupInput`); here it meets
the round's currency: amounts become exact integer minor units (an amount with more decimals
than the currency has is refused rather than rounded, because only
:func:`solver.money.split_exactly` may round money) and the whole combination is checked.
Every check raises :class:`~bot.rounds.errors.InvalidSetup` with a message saying what to type.
"""

from __future__ import annotations

import json
import re
from collections.abc import Callable, Sequence
from dataclasses import dataclass, replace
from fractions import Fraction
from typing import Any

from bot.rounds.errors import InvalidSetup
from bot.rounds.money_text import shown
from bot.rounds.names import room_name
from bot.rounds.searches import Method
from bot.rounds.setup_input import RentInput, SetupInput, TypedAmount, currency_decimals
from solver import InvalidProblem, Problem, split_exactly
from solver.problem import MAX_NAME_LENGTH, MAX_ROOMS, MIN_ROOMS, MIN_TOLERANCE

#: Larger rents are almost certainly typing slips (ten million euros a month).
MAX_RENT_MINOR = 10**9
_AMOUNT = re.compile(r"^(?P<sign>[-+]?)(?P<whole>\d+)(?:[.,](?P<frac>\d*))?$")
_GROUPING = str.maketrans("", "", " _'\u00a0\u202f")


@dataclass(frozen=True, slots=True)
class Money:
    """An amount in integer minor units of ``currency``."""

    minor: int
    currency: str


@dataclass(frozen=True, slots=True)
class RoundSettings:
    """What the admin set up. Members are not part of it: they join later.

    ``rent`` is the total the members pay together each month. ``shared`` (split evenly) and
    ``per_person`` (the same fixed amount for each member, e.g. bills) are parts of that total
    that do not depend on the room; what is left is split by rooms. ``rooms`` are the rooms
    of the round; ``common`` rooms are not let (common space, storage) and take no part.
    With ``empty_allowed`` fewer members than rooms may start, and the method decides which
    rooms stay empty.
    """

    rent: int
    currency: str
    rooms: tuple[str, ...]
    tolerance: int
    floor: int = 0
    shared: int = 0
    per_person: int = 0
    common: tuple[str, ...] = ()
    empty_allowed: bool = False
    #: How the questions go: "parallel" (everyone at once, round by round; the default) or
    #: "walk" (one question at a time, the classical path-following walk).
    method: Method = "parallel"

    @property
    def decimals(self) -> int:
        return currency_decimals(self.currency)

    @property
    def fewest_members(self) -> int:
        """Asking may begin with this many members (every room filled unless empties are ok)."""
        return MIN_ROOMS if self.empty_allowed else len(self.rooms)

    def room_rent(self, members: int) -> int:
        """The part of the total that is split by rooms, for ``members`` members."""
        return self.rent - self.shared - self.per_person * members

    def shared_parts(self, members: int) -> tuple[int, ...]:
        """What each member pays on top of their room, in member order; sums exactly.

        The even split goes through :func:`solver.split_exactly`, so a total that does not
        divide by the member count is still met to the minor unit (the first members in
        order carry the leftover units, one each).
        """
        if members <= 0:
            return ()
        even = split_exactly([Fraction(self.shared, members)] * members, self.shared)
        return tuple(part + self.per_person for part in even)

    def problem(self, members: Sequence[str]) -> Problem:
        """The solver's view of this round with ``members`` (user ids as strings)."""
        return Problem(
            self.room_rent(len(members)), self.rooms, tuple(members), self.tolerance, self.floor
        )

    def to_json(self) -> str:
        data: dict[str, Any] = {
            "rent": self.rent,
            "currency": self.currency,
            "rooms": list(self.rooms),
            "tolerance": self.tolerance,
            "floor": self.floor,
        }
        # Written only when used, so rounds set up without them keep their stored text.
        if self.shared:
            data["shared"] = self.shared
        if self.per_person:
            data["per_person"] = self.per_person
        if self.common:
            data["common"] = list(self.common)
        if self.empty_allowed:
            data["empty_allowed"] = True
        if self.method != "parallel":
            data["method"] = self.method
        return json.dumps(data, separators=(",", ":"))

    @classmethod
    def from_json(cls, text: str) -> RoundSettings:
        data: dict[str, Any] = json.loads(text)
        return cls(
            rent=data["rent"],
            currency=data["currency"],
            rooms=tuple(data["rooms"]),
            tolerance=data["tolerance"],
            floor=data["floor"],
            shared=int(data.get("shared", 0)),
            per_person=int(data.get("per_person", 0)),
            common=tuple(data.get("common", ())),
            empty_allowed=bool(data.get("empty_allowed", False)),
            method="walk" if data.get("method") == "walk" else "parallel",
        )


def check_rent(rent: RentInput, current: str | None, locale: str = "en") -> Money:
    """The rent in minor units of the currency typed with it, else of the ``current`` one."""
    code = rent.currency or current
    if code is None:
        raise InvalidSetup("say which currency the rent is in, e.g. 1850.00 EUR")
    minor = rent.amount.minor(code, what="rent")
    if minor <= 0:
        raise InvalidSetup("the rent must be more than zero; type the monthly total, e.g. 1850 EUR")
    if minor > MAX_RENT_MINOR:
        raise InvalidSetup(
            "that rent is implausibly large; check for extra digits and type the monthly total"
        )
    if minor <= MIN_ROOMS * MIN_TOLERANCE:
        raise InvalidSetup(
            f"a rent of {shown(minor, code, locale)} is too small to split between rooms; "
            "type the monthly total"
        )
    return Money(minor, code)


def check_rooms(rooms: tuple[str, ...]) -> tuple[str, ...]:
    """Room names: 2 to 10, each named, not too long, all different (ignoring case).

    Each name is checked character by character first (:func:`bot.rounds.names.room_name`):
    a name that would break a table line or turn text around is refused.
    """
    rooms = tuple(room_name(name) for name in rooms)
    if not MIN_ROOMS <= len(rooms) <= MAX_ROOMS:
        raise InvalidSetup(
            f"a round needs {MIN_ROOMS} to {MAX_ROOMS} rooms, you gave {len(rooms)}; "
            "list one name per room"
        )
    for position, name in enumerate(rooms, start=1):
        if not name:
            raise InvalidSetup(f"room {position} has no name; give every room a short name")
        if len(name) > MAX_NAME_LENGTH:
            raise InvalidSetup(
                f"room name {name[:20]!r}... is {len(name)} characters; "
                f"use at most {MAX_NAME_LENGTH}"
            )
    folded = [name.casefold() for name in rooms]
    repeated = sorted({rooms[i] for i, f in enumerate(folded) if folded.count(f) > 1})
    if repeated:
        raise InvalidSetup(
            f"room names must differ; {', '.join(repeated)} appears more than once. "
            "Add a detail such as 'front' or 'back'"
        )
    return rooms


def default_tolerance(currency: str) -> int:
    """One major unit of the currency (never below the solver's minimum)."""
    one_major: int = 10 ** currency_decimals(currency)
    return max(one_major, MIN_TOLERANCE)


def build_settings(setup: SetupInput) -> RoundSettings:
    """A new round's settings; nothing is returned unless all of the input is usable."""
    if setup.rent is None or setup.rooms is None:
        raise InvalidSetup("to start a round, give the total rent with its currency and the rooms")
    money = check_rent(setup.rent, None, setup.locale)
    settings = RoundSettings(
        rent=money.minor,
        currency=money.currency,
        rooms=check_rooms(setup.rooms),
        tolerance=default_tolerance(money.currency),
    )
    return check_settings(_with_options(settings, setup), setup.locale)


def amend_settings(current: RoundSettings, setup: SetupInput) -> RoundSettings:
    """``current`` with the given fields replaced; the currency may change with the rent.

    New rooms replace every room, the common ones included (mark them again if needed).
    """
    updated = current
    if setup.rent is not None:
        money = check_rent(setup.rent, current.currency, setup.locale)
        updated = replace(updated, rent=money.minor, currency=money.currency)
    if setup.rooms is not None:
        updated = replace(updated, rooms=check_rooms(setup.rooms), common=())
    return check_settings(_with_options(updated, setup), setup.locale)


def _with_options(settings: RoundSettings, setup: SetupInput) -> RoundSettings:
    """Apply the tolerance, floor, shared costs, common rooms and the empty-rooms switch."""
    updated = settings
    if setup.tolerance is not None:
        tolerance = setup.tolerance.minor(updated.currency, what="tolerance")
        updated = replace(updated, tolerance=tolerance)
    if setup.floor is not None:
        updated = replace(updated, floor=setup.floor.minor(updated.currency, what="floor"))
    if setup.shared is not None:
        updated = replace(updated, shared=_not_negative(setup.shared, updated, "shared part"))
    if setup.per_person is not None:
        amount = _not_negative(setup.per_person, updated, "amount per person")
        updated = replace(updated, per_person=amount)
    if setup.common is not None:
        updated = mark_common(updated, setup.common)
    if setup.empty_allowed is not None:
        updated = replace(updated, empty_allowed=setup.empty_allowed)
    if setup.one_by_one is not None:
        updated = replace(updated, method="walk" if setup.one_by_one else "parallel")
    return updated


def mark_common(settings: RoundSettings, names: tuple[str, ...]) -> RoundSettings:
    """Take the named rooms out of the round (kept as common space); "none" lets them all."""
    every = settings.rooms + settings.common
    wanted = [room_name(name) for name in names if name.strip()]
    if [w.casefold() for w in wanted] in (["none"], ["-"]):
        wanted = []
    by_fold = {room.casefold(): room for room in every}
    unknown = [w for w in wanted if w.casefold() not in by_fold]
    if unknown:
        raise InvalidSetup(
            f"{', '.join(unknown)} is not one of the rooms ({', '.join(every)}); "
            "name rooms exactly as listed to keep them out of the round"
        )
    common = tuple(dict.fromkeys(by_fold[w.casefold()] for w in wanted))
    rooms = tuple(room for room in every if room not in common)
    if len(rooms) < MIN_ROOMS:
        raise InvalidSetup(
            f"that leaves {len(rooms)} room to let; a round needs at least {MIN_ROOMS} rooms"
        )
    return replace(settings, rooms=rooms, common=common)


def check_settings(settings: RoundSettings, locale: str = "en") -> RoundSettings:
    """Check the combination in the group's terms, amounts in its currency format.

    Checked for the most and, with empty rooms allowed, the fewest members, because the part
    split by rooms shrinks with every member who pays a fixed amount. The solver checks the
    same limits again; its messages (in minor units) are only ever a fallback.
    """

    def money(minor: int) -> str:
        return shown(minor, settings.currency, locale)

    if settings.tolerance < MIN_TOLERANCE:
        raise InvalidSetup(
            f"the tolerance is the most anyone could still prefer a swap, in money; it must be "
            f"at least {money(MIN_TOLERANCE)}, e.g. {money(default_tolerance(settings.currency))}"
        )
    if settings.tolerance >= settings.rent:
        raise InvalidSetup(
            f"the tolerance must be smaller than the rent ({money(settings.rent)}); "
            f"{money(default_tolerance(settings.currency))} is a good start"
        )
    if settings.floor < -settings.rent:
        raise InvalidSetup(
            f"the floor is the lowest price a room can get; below zero the others pay you to "
            f"take a room, but not more than the rent: give at least {money(-settings.rent)}"
        )
    _check_shared(settings, money)
    for count in sorted({settings.fewest_members, len(settings.rooms)}):
        room_rent = settings.room_rent(count)
        if room_rent - count * settings.floor <= len(settings.rooms):
            highest = (room_rent - len(settings.rooms) - 1) // count
            raise InvalidSetup(
                f"the floor {money(settings.floor)} is too high: {count} members could not "
                f"pay {money(room_rent)} for the rooms with every room at least that; give a "
                f"floor of at most {money(highest)}"
            )
        stand_ins = [f"member {i}" for i in range(count)]
        try:
            settings.problem(stand_ins)
        except InvalidProblem as exc:  # pragma: no cover - the checks above come first
            raise InvalidSetup(str(exc)) from exc
    return settings


def _check_shared(settings: RoundSettings, money: Callable[[int], str]) -> None:
    most = len(settings.rooms)
    fixed = settings.shared + settings.per_person * most
    if fixed and fixed >= settings.rent:
        raise InvalidSetup(
            f"the shared costs ({money(fixed)} with {most} members) must be less than the "
            f"total ({money(settings.rent)}); lower them so the rooms have something left "
            "to split"
        )


def _not_negative(amount: TypedAmount, settings: RoundSettings, what: str) -> int:
    minor = amount.minor(settings.currency, what=what)
    if minor < 0:
        raise InvalidSetup(f"the {what} cannot be negative; type 0 for none")
    return minor
