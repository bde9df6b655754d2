"""Set-up input as people type it, parsed once into a typed value the engine's event carries.

``/newround 1850.00 EUR; Loft, Attic; tolerance 5; shared 300`` becomes a :class:`SetupInput`
right where it arrives (the command handler or the guided set-up): the rent split from its
currency code, the rooms split into names, each option under its name, the switches as
booleans. Only what needs the round's currency is left for later: how many decimals an
amount may have and its value in minor units (:meth:`TypedAmount.minor`), decided by
:mod:`bot.rounds.round_settings` once the currency is known (an ``/adjust`` may change the
rent without repeating the currency).

Every syntax problem raises :class:`~bot.rounds.errors.InvalidSetup` with a message saying
what to type instead.
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from dataclasses import dataclass
from decimal import Decimal

from babel.numbers import get_currency_precision, list_currencies

from bot.rounds.errors import InvalidSetup

#: Options that may follow the rent and the rooms, each as ``name value``.
SETUP_OPTIONS = ("tolerance", "floor", "shared", "per person", "not let", "empty rooms")
#: What ``/adjust`` may change: the options, and the rent and the rooms themselves.
ADJUST_OPTIONS = ("rent", "rooms", *SETUP_OPTIONS)
_OPTION = re.compile(
    r"^(?P<name>tolerance|floor|shared|per person|not let|empty rooms|rent|rooms)"
    r"\s*[:=]?\s*(?P<value>.+)$",
    re.IGNORECASE,
)
_AMOUNT = re.compile(r"^(?P<sign>[-+]?)(?P<whole>\d+)(?:[.,](?P<frac>\d*))?$")
_GROUPING = str.maketrans("", "", " _'\u00a0\u202f")
_CODE_LIKE = re.compile(r"[A-Za-z]{3}")


def currency_decimals(code: str) -> int:
    """Minor-unit digits of an ISO 4217 currency, from Babel's CLDR data."""
    digits: int = get_currency_precision(code)
    return digits


@dataclass(frozen=True, slots=True)
class TypedAmount:
    """A decimal amount as typed (``1850``, ``-20,5``), parsed; no currency attached yet."""

    text: str
    value: Decimal
    decimals_typed: int

    def minor(self, currency: str, *, what: str) -> int:
        """The amount in exact minor units of ``currency``; more decimals than it has: refused.

        Refused rather than rounded, because only :func:`solver.money.split_exactly` rounds
        money.
        """
        decimals = currency_decimals(currency)
        if self.decimals_typed > decimals:
            raise InvalidSetup(
                f"{currency} has {decimals} decimal places, but the {what} {self.text!r} has "
                f"{self.decimals_typed}; type it with at most {decimals}"
            )
        return int(self.value.scaleb(decimals))


@dataclass(frozen=True, slots=True)
class RentInput:
    """The monthly total as typed: an amount and, if given, its currency code."""

    amount: TypedAmount
    currency: str | None


@dataclass(frozen=True, slots=True)
class SetupInput:
    """Everything a set-up or ``/adjust`` message said; ``None`` means "not given"."""

    rent: RentInput | None = None
    rooms: tuple[str, ...] | None = None
    tolerance: TypedAmount | None = None
    floor: TypedAmount | None = None
    shared: TypedAmount | None = None
    per_person: TypedAmount | None = None
    common: tuple[str, ...] | None = None
    empty_allowed: bool | None = None

    @classmethod
    def parse(
        cls,
        rent: str | None = None,
        rooms: Sequence[str] | str | None = None,
        *,
        tolerance: str | None = None,
        floor: str | None = None,
        shared: str | None = None,
        per_person: str | None = None,
        common: Sequence[str] | str | None = None,
        empty_allowed: str | bool | None = None,
    ) -> SetupInput:
        """Parse each piece that was given, as typed."""

        def amount(text: str | None, what: str) -> TypedAmount | None:
            return None if text is None else parse_amount(text, what=what)

        switch = empty_allowed
        return cls(
            rent=None if rent is None else parse_rent(rent),
            rooms=None if rooms is None else split_names(rooms),
            tolerance=amount(tolerance, "tolerance"),
            floor=amount(floor, "floor"),
            shared=amount(shared, "shared part"),
            per_person=amount(per_person, "amount per person"),
            common=None if common is None else split_names(common),
            empty_allowed=parse_switch(switch, what="empty rooms")
            if isinstance(switch, str)
            else switch,
        )

    @classmethod
    def from_options(cls, options: dict[str, str]) -> SetupInput:
        """The value of ``name value`` options (see :func:`parse_options`)."""
        return cls.parse(
            options.get("rent"),
            options.get("rooms"),
            tolerance=options.get("tolerance"),
            floor=options.get("floor"),
            shared=options.get("shared"),
            per_person=options.get("per person"),
            common=options.get("not let"),
            empty_allowed=options.get("empty rooms"),
        )

    @property
    def empty(self) -> bool:
        """True when nothing at all was given (an ``/adjust`` with nothing to change)."""
        return self == SetupInput()


def parse_setup_line(text: str) -> SetupInput:
    """``1850 EUR; Loft, Attic; tolerance 5; shared 300`` -> the rent, rooms and options."""
    parts = [p.strip() for p in text.split(";")]
    if len(parts) < 2 or not parts[0] or not parts[1]:
        raise InvalidSetup(
            "write the rent with its currency, a semicolon, then the rooms separated by commas, "
            "e.g. /newround 1850.00 EUR; Loft, Attic, Bay room"
        )
    options = parse_options(parts[2:], SETUP_OPTIONS)
    return SetupInput.from_options({**options, "rent": parts[0], "rooms": parts[1]})


def parse_adjust_line(text: str) -> SetupInput:
    """``rent 1900 EUR; shared 300; not let Box room``: only what is to change."""
    setup = SetupInput.from_options(
        parse_options([p.strip() for p in text.split(";")], ADJUST_OPTIONS)
    )
    if setup.empty:
        raise InvalidSetup(
            "say what to change, e.g. /adjust shared 300; not let Box room; empty rooms yes"
        )
    return setup


def parse_options(parts: Sequence[str], allowed: tuple[str, ...]) -> dict[str, str]:
    """``name value`` pieces (``shared 300``, ``not let Box room``) into a dict by name."""
    options: dict[str, str] = {}
    for extra in parts:
        if not extra:
            continue
        match = _OPTION.match(extra)
        if match is None or match.group("name").lower() not in allowed:
            raise InvalidSetup(
                f"I do not understand {extra!r}; you may add "
                + ", ".join(f"'; {name} ...'" for name in allowed)
            )
        options[match.group("name").lower()] = match.group("value").strip()
    return options


def parse_currency(text: str) -> str:
    """An ISO 4217 code Babel knows, upper-cased; refuses anything else."""
    code = text.strip().upper()
    if not _CODE_LIKE.fullmatch(code) or code not in list_currencies():
        raise InvalidSetup(
            f"{text.strip()!r} is not a currency code I know; use a three-letter ISO code "
            "such as EUR, GBP or JPY"
        )
    return code


def parse_rent(text: str) -> RentInput:
    """Rent with or without its currency: ``"1850.00 EUR"``, ``"EUR 1850"``, ``"1850"``.

    Only three-letter words that are currency codes count as the currency, so a mistyped
    amount such as ``abc EUR`` is reported as not a number rather than as a second code.
    """
    words = text.strip().split()
    known = set(list_currencies())
    codes = [w for w in words if _CODE_LIKE.fullmatch(w) and w.upper() in known]
    rest = [w for w in words if w not in codes]
    if len(codes) > 1:
        raise InvalidSetup("give one currency code with the rent, e.g. 1850.00 EUR")
    unknown = [w for w in rest if _CODE_LIKE.fullmatch(w)]
    numbers = [w for w in rest if w not in unknown]
    if unknown and not codes and numbers and _AMOUNT.match("".join(numbers).translate(_GROUPING)):
        parse_currency(unknown[0])  # a number and a word that looks like a code: say so
    amount = parse_amount(" ".join(rest), what="rent")
    return RentInput(amount, codes[0].upper() if codes else None)


def parse_amount(text: str, *, what: str) -> TypedAmount:
    """A decimal amount with at most one decimal separator; grouping spaces are ignored."""
    cleaned = text.strip().translate(_GROUPING)
    match = _AMOUNT.match(cleaned)
    if match is None:
        raise InvalidSetup(
            f"the {what} {text.strip()!r} is not a number; type digits with at most one "
            "decimal point, e.g. 1850.50"
        )
    frac = match.group("frac") or ""
    value = Decimal(f"{match.group('sign')}{match.group('whole')}.{frac or '0'}")
    return TypedAmount(text.strip(), value, len(frac))


def parse_switch(text: str, *, what: str) -> bool:
    """``yes``/``no`` (also on/off, true/false) for a round switch."""
    word = text.strip().casefold()
    if word in ("yes", "y", "on", "true"):
        return True
    if word in ("no", "n", "off", "false"):
        return False
    raise InvalidSetup(f"for {what}, type yes or no, not {text.strip()!r}")


def split_names(names: Sequence[str] | str) -> tuple[str, ...]:
    """Names one per item, or one per line (else per comma) in a single string; stripped."""
    if isinstance(names, str):
        separator = "\n" if "\n" in names else ","
        items: Sequence[str] = names.split(separator)
    else:
        items = [str(n) for n in names]
    return tuple(item.strip() for item in items)
