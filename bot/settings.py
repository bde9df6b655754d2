"""A round's settings and the set-up input that produces them.

People type amounts ("1850.00 EUR", "EUR 1850", "1850,5 eur"); the engine wants integer minor
units. The conversion is exact: an amount with more decimals than the currency has is
refused rather than rounded, because only :func:`solver.money.split_exactly` may round money.
Every check raises :class:`~bot.errors.InvalidSetup` with a message saying what to type.
"""

from __future__ import annotations

import json
import re
from collections.abc import Sequence
from dataclasses import dataclass, replace
from decimal import Decimal, InvalidOperation
from fractions import Fraction
from typing import Any

from babel.numbers import get_currency_precision, list_currencies

from bot.errors import InvalidSetup
from solver import InvalidProblem, Problem, split_exactly
from solver.money import format_minor
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
        )


def currency_decimals(code: str) -> int:
    """Minor-unit digits of an ISO 4217 currency, from Babel's CLDR data."""
    digits: int = get_currency_precision(code)
    return digits


def parse_currency(text: str) -> str:
    """An ISO 4217 code Babel knows, upper-cased; refuses anything else."""
    code = text.strip().upper()
    if not re.fullmatch(r"[A-Z]{3}", code) or code not in list_currencies():
        raise InvalidSetup(
            f"{text.strip()!r} is not a currency code I know; use a three-letter ISO code "
            "such as EUR, GBP or JPY"
        )
    return code


def parse_rent(text: str, currency: str | None = None) -> Money:
    """Rent with its currency, e.g. ``"1850.00 EUR"``, ``"EUR 1850"`` or ``"1850"`` + code.

    The currency may be part of ``text`` or given separately; if both, they must agree.
    """
    amount_text, code = _split_currency(text, currency)
    minor = parse_amount(amount_text, code, what="rent")
    if minor <= 0:
        raise InvalidSetup("the rent must be more than zero; type the monthly total, e.g. 1850 EUR")
    if minor > MAX_RENT_MINOR:
        raise InvalidSetup(
            "that rent is implausibly large; check for extra digits and type the monthly total"
        )
    return Money(minor, code)


def parse_amount(text: str, currency: str, *, what: str) -> int:
    """A decimal amount in ``currency`` as exact minor units (may be negative or zero)."""
    cleaned = text.strip().translate(_GROUPING)
    match = _AMOUNT.match(cleaned)
    if match is None:
        raise InvalidSetup(
            f"the {what} {text.strip()!r} is not a number; type digits with at most one "
            "decimal point, e.g. 1850.50"
        )
    decimals = currency_decimals(currency)
    frac = match.group("frac") or ""
    if len(frac) > decimals:
        raise InvalidSetup(
            f"{currency} has {decimals} decimal places, but the {what} {text.strip()!r} has "
            f"{len(frac)}; type it with at most {decimals}"
        )
    try:
        value = Decimal(f"{match.group('sign')}{match.group('whole')}.{frac or '0'}")
    except InvalidOperation as exc:  # pragma: no cover - the regex already excludes this
        raise InvalidSetup(f"the {what} {text.strip()!r} is not a number") from exc
    scaled = value.scaleb(decimals)
    if scaled != scaled.to_integral_value():  # exactness guard; never true after the check
        raise InvalidSetup(f"the {what} {text.strip()!r} has too many decimal places")
    return int(scaled)


def parse_rooms(names: Sequence[str] | str) -> tuple[str, ...]:
    """Room names, one per item (or one per line / comma in a single string)."""
    items = _split_names(names) if isinstance(names, str) else [str(n) for n in names]
    rooms = tuple(item.strip() for item in items)
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


@dataclass(frozen=True, slots=True)
class Extras:
    """The optional set-up input beyond rent and rooms, as typed (None: not given)."""

    tolerance: str | None = None
    floor: str | None = None
    shared: str | None = None
    per_person: str | None = None
    common: Sequence[str] | str | None = None
    empty_allowed: bool | None = None


def build_settings(
    *,
    rent: str,
    rooms: Sequence[str] | str,
    currency: str | None = None,
    tolerance: str | None = None,
    floor: str | None = None,
    extras: Extras | None = None,
) -> RoundSettings:
    """Validate all set-up input together; nothing is returned unless all of it is usable."""
    money = parse_rent(rent, currency)
    settings = RoundSettings(
        rent=money.minor,
        currency=money.currency,
        rooms=parse_rooms(rooms),
        tolerance=_tolerance(tolerance, money.currency),
        floor=0 if floor is None else parse_amount(floor, money.currency, what="floor"),
    )
    return check_settings(_with_extras(settings, extras or Extras()))


def amend_settings(
    current: RoundSettings,
    *,
    rent: str | None = None,
    rooms: Sequence[str] | str | None = None,
    tolerance: str | None = None,
    floor: str | None = None,
    extras: Extras | None = None,
) -> RoundSettings:
    """``current`` with the given fields replaced; the currency may change with the rent.

    New rooms replace every room, the common ones included (mark them again if needed).
    """
    updated = current
    if rent is not None:
        money = parse_rent(rent, None if _has_code(rent) else current.currency)
        updated = replace(updated, rent=money.minor, currency=money.currency)
    if rooms is not None:
        updated = replace(updated, rooms=parse_rooms(rooms), common=())
    if tolerance is not None:
        updated = replace(updated, tolerance=_tolerance(tolerance, updated.currency))
    if floor is not None:
        updated = replace(updated, floor=parse_amount(floor, updated.currency, what="floor"))
    return check_settings(_with_extras(updated, extras or Extras()))


def _with_extras(settings: RoundSettings, extras: Extras) -> RoundSettings:
    """Apply the shared costs, common rooms and the empty-rooms switch."""
    updated = settings
    if extras.tolerance is not None:
        updated = replace(updated, tolerance=_tolerance(extras.tolerance, updated.currency))
    if extras.floor is not None:
        updated = replace(updated, floor=parse_amount(extras.floor, updated.currency, what="floor"))
    if extras.shared is not None:
        updated = replace(updated, shared=_not_negative(extras.shared, updated, "shared part"))
    if extras.per_person is not None:
        amount = _not_negative(extras.per_person, updated, "amount per person")
        updated = replace(updated, per_person=amount)
    if extras.common is not None:
        updated = mark_common(updated, extras.common)
    if extras.empty_allowed is not None:
        updated = replace(updated, empty_allowed=extras.empty_allowed)
    return updated


def mark_common(settings: RoundSettings, names: Sequence[str] | str) -> RoundSettings:
    """Take the named rooms out of the round (kept as common space); "none" lets them all."""
    every = settings.rooms + settings.common
    items = _split_names(names) if isinstance(names, str) else [str(n) for n in names]
    wanted = [item.strip() for item in items if item.strip()]
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


def parse_switch(text: str, *, what: str) -> bool:
    """``yes``/``no`` (also on/off, true/false) for a round switch."""
    word = text.strip().casefold()
    if word in ("yes", "y", "on", "true"):
        return True
    if word in ("no", "n", "off", "false"):
        return False
    raise InvalidSetup(f"for {what}, type yes or no, not {text.strip()!r}")


def check_settings(settings: RoundSettings) -> RoundSettings:
    """Let the solver judge the combination (floor vs rent, tolerance) in its own words.

    Checked for the most and, with empty rooms allowed, the fewest members, because the part
    split by rooms shrinks with every member who pays a fixed amount.
    """
    if settings.tolerance >= settings.rent:
        raise InvalidSetup("the tolerance must be smaller than the rent; 1.00 is a good start")
    _check_shared(settings)
    for count in sorted({settings.fewest_members, len(settings.rooms)}):
        stand_ins = [f"member {i}" for i in range(count)]
        try:
            settings.problem(stand_ins)
        except InvalidProblem as exc:
            raise InvalidSetup(str(exc)) from exc
    return settings


def _check_shared(settings: RoundSettings) -> None:
    most = len(settings.rooms)
    fixed = settings.shared + settings.per_person * most
    if fixed and fixed >= settings.rent:
        raise InvalidSetup(
            f"the shared costs ({format_minor(fixed, settings.decimals)} {settings.currency} "
            f"with {most} members) must be less than the total "
            f"({format_minor(settings.rent, settings.decimals)}); lower them so the rooms "
            "have something left to split"
        )


def _not_negative(text: str, settings: RoundSettings, what: str) -> int:
    amount = parse_amount(text, settings.currency, what=what)
    if amount < 0:
        raise InvalidSetup(f"the {what} cannot be negative; type 0 for none")
    return amount


def _tolerance(text: str | None, currency: str) -> int:
    if text is None:
        return default_tolerance(currency)
    return parse_amount(text, currency, what="tolerance")


def _has_code(text: str) -> bool:
    return re.search(r"[A-Za-z]{3}", text) is not None


def _split_currency(text: str, currency: str | None) -> tuple[str, str]:
    words = text.strip().split()
    three_letters = [w for w in words if re.fullmatch(r"[A-Za-z]{3}", w)]
    # A word is the currency when it is one; any other word stays with the amount, so
    # "abc EUR" is a bad amount, not a second currency. A lone unknown code is named as such.
    known = [w for w in three_letters if w.upper() in list_currencies()]
    codes = known or (three_letters if len(three_letters) == 1 else [])
    amount = " ".join(w for w in words if w not in codes)
    if len(codes) > 1:
        raise InvalidSetup("give one currency code with the rent, e.g. 1850.00 EUR")
    named = parse_currency(codes[0]) if codes else None
    given = parse_currency(currency) if currency is not None else None
    if named and given and named != given:
        raise InvalidSetup(f"the rent says {named} but the currency is {given}; use one of them")
    code = named or given
    if code is None:
        raise InvalidSetup("say which currency the rent is in, e.g. 1850.00 EUR")
    return amount, code


def _split_names(text: str) -> list[str]:
    separator = "\n" if "\n" in text else ","
    return text.split(separator)
