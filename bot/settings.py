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
from typing import Any

from babel.numbers import get_currency_precision, list_currencies

from bot.errors import InvalidSetup
from solver import InvalidProblem, Problem
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
    """What the admin set up. Members are not part of it: they join later."""

    rent: int
    currency: str
    rooms: tuple[str, ...]
    tolerance: int
    floor: int = 0

    @property
    def decimals(self) -> int:
        return currency_decimals(self.currency)

    def problem(self, members: Sequence[str]) -> Problem:
        """The solver's view of this round with ``members`` (user ids as strings)."""
        return Problem(self.rent, self.rooms, tuple(members), self.tolerance, self.floor)

    def to_json(self) -> str:
        return json.dumps(
            {
                "rent": self.rent,
                "currency": self.currency,
                "rooms": list(self.rooms),
                "tolerance": self.tolerance,
                "floor": self.floor,
            },
            separators=(",", ":"),
        )

    @classmethod
    def from_json(cls, text: str) -> RoundSettings:
        data: dict[str, Any] = json.loads(text)
        return cls(
            rent=data["rent"],
            currency=data["currency"],
            rooms=tuple(data["rooms"]),
            tolerance=data["tolerance"],
            floor=data["floor"],
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


def build_settings(
    *,
    rent: str,
    rooms: Sequence[str] | str,
    currency: str | None = None,
    tolerance: str | None = None,
    floor: str | None = None,
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
    return check_settings(settings)


def amend_settings(
    current: RoundSettings,
    *,
    rent: str | None = None,
    rooms: Sequence[str] | str | None = None,
    tolerance: str | None = None,
    floor: str | None = None,
) -> RoundSettings:
    """``current`` with the given fields replaced; the currency may change with the rent."""
    updated = current
    if rent is not None:
        money = parse_rent(rent, None if _has_code(rent) else current.currency)
        updated = replace(updated, rent=money.minor, currency=money.currency)
    if rooms is not None:
        updated = replace(updated, rooms=parse_rooms(rooms))
    if tolerance is not None:
        updated = replace(updated, tolerance=_tolerance(tolerance, updated.currency))
    if floor is not None:
        updated = replace(updated, floor=parse_amount(floor, updated.currency, what="floor"))
    return check_settings(updated)


def check_settings(settings: RoundSettings) -> RoundSettings:
    """Let the solver judge the combination (floor vs rent, tolerance) in its own words."""
    if settings.tolerance >= settings.rent:
        raise InvalidSetup("the tolerance must be smaller than the rent; 1.00 is a good start")
    stand_ins = [f"member {i}" for i in range(len(settings.rooms))]
    try:
        settings.problem(stand_ins)
    except InvalidProblem as exc:
        raise InvalidSetup(str(exc)) from exc
    return settings


def _tolerance(text: str | None, currency: str) -> int:
    if text is None:
        return default_tolerance(currency)
    return parse_amount(text, currency, what="tolerance")


def _has_code(text: str) -> bool:
    return re.search(r"[A-Za-z]{3}", text) is not None


def _split_currency(text: str, currency: str | None) -> tuple[str, str]:
    words = text.strip().split()
    codes = [w for w in words if re.fullmatch(r"[A-Za-z]{3}", w)]
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
