"""Set-up input as people type it, parsed once into a typed value the engine's event carries.

``/newround 1850.00 EUR; Loft, Attic; tolerance 5; shared 300`` becomes a :class:`SetupInput`
right where it arrives (the command handler or the guided set-up): the rent split from its
currency code, the rooms split into names, each option under its name, the switches as
booleans. Only what needs the round's currency is left for later: how many decimals an
amount may have and its value in minor units (:meth:`TypedAmount.minor`), decided by
:mod:`bot.rounds.round_settings` once the currency is known (an ``/adjust`` may change the
rent without repeating the currency).

Amounts are read the way people type them, with Babel (CLDR data), in the group's locale
first and then in the other common form: ``1,850.00``, ``1.850,00``, ``1 850``, ``1850``,
with a currency code or symbol before or after (``€1850``, ``1850 €``, ``EUR 1850``). A symbol
several currencies share (``$``, ``¥``) is answered with a question naming the codes, unless
the locale's own territory settles it (``$`` in ``en_CA`` is CAD).

Every syntax problem raises :class:`~bot.rounds.errors.InvalidSetup` with a message saying
what to type instead.
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from dataclasses import dataclass, replace
from decimal import Decimal
from functools import cache

from babel import Locale
from babel.core import get_global
from babel.numbers import (
    NumberFormatError,
    get_currency_precision,
    get_currency_symbol,
    get_territory_currencies,
    list_currencies,
    parse_decimal,
)

from bot.rounds.errors import InvalidSetup

#: Options that may follow the rent and the rooms, each as ``name value``.
SETUP_OPTIONS = (
    "tolerance",
    "floor",
    "shared",
    "per person",
    "not let",
    "empty rooms",
    "one by one",
)
#: What ``/adjust`` may change: the options, and the rent and the rooms themselves.
ADJUST_OPTIONS = ("rent", "rooms", *SETUP_OPTIONS)
_OPTION = re.compile(
    r"^(?P<name>tolerance|floor|shared|per person|not let|empty rooms|one by one|rent|rooms)"
    r"\s*[:=]?\s*(?P<value>.+)$",
    re.IGNORECASE,
)
_CODE_LIKE = re.compile(r"[A-Za-z]{3}")
#: Digits with "." and "," as the only separators (grouping spaces and apostrophes removed).
_PLAIN_NUMBER = re.compile(r"^[+-]?(?:\d[\d.,]*|[.,]\d+)$")
_GROUPING = str.maketrans("", "", " _'\u00a0\u202f\u2009")
_MINUS_SIGNS = str.maketrans({"\u2212": "-", "\u2013": "-"})
#: Runs that are neither part of the number nor white space: a currency code or symbol.
_MARKER = re.compile(r"[^\d\s.,'+\-\u2212\u2013\u00a0\u202f\u2009]+")
#: The other common way of writing numbers, tried when the group's locale cannot read one.
_FALLBACK_LOCALES = ("en", "de")


def currency_decimals(code: str) -> int:
    """Minor-unit digits of an ISO 4217 currency, from Babel's CLDR data."""
    digits: int = get_currency_precision(code)
    return digits


@dataclass(frozen=True, slots=True)
class TypedAmount:
    """A decimal amount as typed (``1,850.00``, ``-20,5``), parsed; maybe with a currency.

    ``value`` keeps the decimals as typed (``1.850`` has three), so a currency with fewer
    can refuse it instead of guessing: in money, a thousandfold misreading is worse than a
    question.
    """

    text: str
    value: Decimal
    currency: str | None = None

    def minor(self, currency: str, *, what: str) -> int:
        """The amount in exact minor units of ``currency``; more decimals than it has: refused.

        Refused rather than rounded, because only :func:`solver.money.split_exactly` rounds
        money. Decimal places per currency: ISO 4217, via Babel's CLDR data.
        """
        if self.currency is not None and self.currency != currency:
            raise InvalidSetup(
                f"the {what} {self.text!r} is in {self.currency}, but the round is in "
                f"{currency}; give it in {currency}"
            )
        decimals = currency_decimals(currency)
        typed = max(0, -int(self.value.as_tuple().exponent))
        if typed > decimals:
            raise InvalidSetup(
                f"{currency} has {decimals} decimal places, but the {what} {self.text!r} has "
                f"{typed}; type it with at most {decimals}"
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
    #: Ask one question at a time (the walk) instead of everyone at once, round by round.
    one_by_one: bool | None = None
    #: The group's locale: how its amounts were read, and how refusals will show amounts.
    locale: str = "en"

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
        one_by_one: str | bool | None = None,
        locale: str = "en",
    ) -> SetupInput:
        """Parse each piece that was given, as typed in a group with this ``locale``."""

        def amount(text: str | None, what: str) -> TypedAmount | None:
            return None if text is None else parse_money(text, what=what, locale=locale)

        def switch(value: str | bool | None, what: str) -> bool | None:
            return parse_switch(value, what=what) if isinstance(value, str) else value

        return cls(
            rent=None if rent is None else parse_rent(rent, locale),
            rooms=None if rooms is None else split_names(rooms),
            tolerance=amount(tolerance, "tolerance"),
            floor=amount(floor, "floor"),
            shared=amount(shared, "shared part"),
            per_person=amount(per_person, "amount per person"),
            common=None if common is None else split_names(common),
            empty_allowed=switch(empty_allowed, "empty rooms"),
            one_by_one=switch(one_by_one, "one by one"),
            locale=locale,
        )

    @classmethod
    def from_options(cls, options: dict[str, str], locale: str = "en") -> SetupInput:
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
            one_by_one=options.get("one by one"),
            locale=locale,
        )

    @property
    def empty(self) -> bool:
        """True when nothing at all was given (an ``/adjust`` with nothing to change)."""
        return replace(self, locale="en") == SetupInput()


def parse_setup_line(text: str, locale: str = "en") -> SetupInput:
    """``1850 EUR; Loft, Attic; tolerance 5; shared 300`` -> the rent, rooms and options."""
    parts = [p.strip() for p in text.split(";")]
    if len(parts) < 2 or not parts[0] or not parts[1]:
        raise InvalidSetup(
            "write the rent with its currency, a semicolon, then the rooms separated by commas, "
            "e.g. /newround 1850.00 EUR; Loft, Attic, Bay room"
        )
    options = parse_options(parts[2:], SETUP_OPTIONS)
    return SetupInput.from_options({**options, "rent": parts[0], "rooms": parts[1]}, locale)


def parse_adjust_line(text: str, locale: str = "en") -> SetupInput:
    """``rent 1900 EUR; shared 300; not let Box room``: only what is to change."""
    setup = SetupInput.from_options(
        parse_options([p.strip() for p in text.split(";")], ADJUST_OPTIONS), locale
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


def parse_rent(text: str, locale: str = "en") -> RentInput:
    """Rent with or without its currency: ``"1,850.00 EUR"``, ``"€1850"``, ``"1850"``."""
    amount = parse_money(text, what="rent", locale=locale)
    return RentInput(amount, amount.currency)


def parse_money(text: str, *, what: str, locale: str = "en") -> TypedAmount:
    """An amount with an optional currency code or symbol before or after it."""
    cleaned = text.strip().translate(_MINUS_SIGNS)
    markers = _MARKER.findall(cleaned)
    if not markers:
        return parse_amount(cleaned, what=what, locale=locale)
    codes = [m for m in markers if _CODE_LIKE.fullmatch(m) and m.upper() in list_currencies()]
    if len(markers) > 1:
        if len(codes) > 1:
            raise InvalidSetup(f"give one currency code with the {what}, e.g. 1850.00 EUR")
        raise InvalidSetup(
            f"the {what} {text.strip()!r} is not an amount I can read; type digits and a "
            "currency, e.g. 1850.00 EUR"
        )
    marker = markers[0]
    number = cleaned.replace(marker, " ", 1).strip()
    at_edge = cleaned.lstrip("+-").startswith(marker) or cleaned.endswith(marker)
    if not at_edge or not number.lstrip("+-").strip():
        raise InvalidSetup(
            f"the {what} {text.strip()!r} is not an amount I can read; type digits and a "
            "currency, e.g. 1850.00 EUR"
        )
    amount = parse_amount(number.replace(" ", ""), what=what, locale=locale)
    if codes:
        code = codes[0].upper()
    elif _CODE_LIKE.fullmatch(marker):
        code = parse_currency(marker)  # three letters that are no currency: say so
    else:
        code = currency_of_symbol(marker, locale)
    return replace(amount, text=text.strip(), currency=code)


def currency_of_symbol(symbol: str, locale: str = "en") -> str:
    """The currency a symbol means to this group, or a question naming the candidates.

    Babel's symbol table for the group's locale decides. A symbol that several currencies
    in use share once letters are ignored (``$``: US$, CA$, A$ ...) is ambiguous unless the
    locale has a territory and its table gives exactly one currency that very symbol.
    """
    table = _symbols(locale)
    exact = sorted(code for code, shown in table.items() if shown == symbol)
    core = _symbol_core(symbol)
    alike = sorted(code for code, shown in table.items() if core and _symbol_core(shown) == core)
    territory = Locale.parse(locale).territory is not None
    if len(exact) == 1 and (territory or alike == exact):
        return exact[0]
    candidates = list(dict.fromkeys(exact + alike))
    if not candidates:
        raise InvalidSetup(
            f"{symbol!r} is not a currency I know; type a three-letter code such as EUR, GBP or JPY"
        )
    examples = ", ".join(candidates[:3])
    raise InvalidSetup(
        f"which currency do you mean by {symbol}: {examples}"
        + (" or another" if len(candidates) > 3 else "")
        + f"? Type the code instead, e.g. 1850 {candidates[0]}"
    )


@cache
def _symbols(locale: str) -> dict[str, str]:
    """Each currency in use today and its symbol in ``locale`` (CLDR, via Babel)."""
    in_use: set[str] = set()
    for territory in get_global("territory_currencies"):
        in_use.update(get_territory_currencies(territory))
    return {code: get_currency_symbol(code, locale) for code in sorted(in_use)}


def _symbol_core(shown: str) -> str:
    return re.sub(r"[A-Za-z.]", "", shown)


def parse_amount(text: str, *, what: str, locale: str = "en") -> TypedAmount:
    """A number as typed in the group's locale, or failing that in the other common form.

    The group's reading wins whenever it has one (``1.850`` in an English group is 1.85,
    refused for EUR as three decimals); the other forms only read what it cannot.
    """
    compact = text.strip().translate(_MINUS_SIGNS).translate(_GROUPING)
    if not _PLAIN_NUMBER.match(compact):
        raise InvalidSetup(
            f"the {what} {text.strip()!r} is not a number; type digits with at most one "
            "decimal point, e.g. 1850.50"
        )
    for form in dict.fromkeys((locale, *_FALLBACK_LOCALES)):
        try:
            value = parse_decimal(compact, locale=form, strict=True)
        except NumberFormatError:
            continue
        if value.is_finite():
            return TypedAmount(text.strip(), value)
    raise InvalidSetup(
        f"the {what} {text.strip()!r} is not a number I can read; type it like 1850.50 or 1,850.50"
    )


#: Between amounts in a list: a semicolon, a new line, a slash, or a comma before a space (a
#: comma right between digits is part of a number: 1,200 or 12,5).
_LIST_SEPARATOR = re.compile(r";|\n|/|,\s+")
#: Replies that take rough values back (or decline to give any).
SKIP_WORDS = frozenset({"skip", "none", "no", "-", "clear"})


def parse_amount_list(
    text: str, *, what: str, locale: str = "en"
) -> tuple[TypedAmount, ...] | None:
    """``700, 450, 600`` -> three amounts; ``skip`` -> None (take back what was given)."""
    if text.strip().casefold() in SKIP_WORDS:
        return None
    pieces = [piece.strip() for piece in _LIST_SEPARATOR.split(text.strip())]
    if not all(pieces):
        raise InvalidSetup(f"separate the {what}s with commas, e.g. 700, 450, 600")
    return tuple(parse_money(piece, what=what, locale=locale) for piece in pieces)


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
