"""Amounts as people type them, read with Babel; refusals speak in the group's currency format.

Outside references: ISO 4217 minor units (EUR 2, JPY 0, BHD 3) and CLDR number and currency
formats (grouping and decimal signs per locale, currency symbols per locale), both through
Babel. Which forms people type (``1,850.00``, ``1.850,00``, ``1 850``, ``€1850``) is common
practice, not a standard.
"""

from __future__ import annotations

import re

import pytest

from bot.rounds.errors import InvalidSetup
from bot.rounds.round_settings import build_settings, check_rent
from bot.rounds.setup_input import SetupInput, parse_rent

ROOMS = ["Loft", "Attic", "Bay"]


@pytest.mark.parametrize(
    ("text", "locale", "minor", "code"),
    [
        ("1,850.00 EUR", "en", 185_000, "EUR"),
        ("1.850,00 EUR", "en", 185_000, "EUR"),  # the other common form
        ("1.850,00 €", "de", 185_000, "EUR"),
        ("1 850 EUR", "en", 185_000, "EUR"),
        ("1\u202f850,50 EUR", "fr", 185_050, "EUR"),  # narrow no-break space, as CLDR fr
        ("1850", "en", None, None),  # no currency: asked for below
        ("€1850", "en", 185_000, "EUR"),
        ("1850 €", "en", 185_000, "EUR"),
        ("EUR 1850", "en", 185_000, "EUR"),
        ("eur 1850,5", "en", 185_050, "EUR"),
        ("1,850 EUR", "en", 185_000, "EUR"),  # a grouping comma, not three decimals
        ("£1,200", "en", 120_000, "GBP"),
        ("$1,850", "en_US", 185_000, "USD"),
        ("$1850", "en_CA", 185_000, "CAD"),
        ("240000 JPY", "en", 240_000, "JPY"),
        ("410.125 BHD", "en", 410_125, "BHD"),
    ],
)
def test_amounts_as_people_type_them(text: str, locale: str, minor: int | None, code: str) -> None:
    rent = parse_rent(text, locale)
    if minor is None:
        assert rent.currency is None
        return
    money = check_rent(rent, None, locale)
    assert (money.minor, money.currency) == (minor, code)


@pytest.mark.parametrize(
    ("text", "locale", "says"),
    [
        ("1e12 EUR", "en", "not an amount I can read"),
        ("NaN EUR", "en", "not an amount I can read"),
        ("Infinity EUR", "en", "not an amount I can read"),
        ("-1850 EUR", "en", "more than zero"),
        ("0 EUR", "en", "more than zero"),
        ("0.03 EUR", "en", "too small to split"),
        ("1850.005 EUR", "en", "EUR has 2 decimal places"),
        ("1.850 EUR", "en", "EUR has 2 decimal places, but the rent '1.850 EUR' has 3"),
        ("1850.5 JPY", "en", "JPY has 0 decimal places"),
        ("1850", "en", "which currency the rent is in"),
        ("1850 XQQ", "en", "not a currency code I know"),
        ("1850 EUR GBP", "en", "one currency code"),
        ("abc EUR", "en", "not an amount I can read"),
        ("$1850", "en", "which currency do you mean by $"),
        ("¥5000", "en", "which currency do you mean by ¥"),
        ("12 ab 34 EUR", "en", "not an amount I can read"),
    ],
)
def test_bad_amounts_are_refused_saying_what_to_type(text: str, locale: str, says: str) -> None:
    with pytest.raises(InvalidSetup, match=re.escape(says)) as refused:
        check_rent(parse_rent(text, locale), None, locale)
    assert "minor unit" not in str(refused.value)


def test_an_ambiguous_symbol_names_the_codes_to_type() -> None:
    with pytest.raises(InvalidSetup) as refused:
        parse_rent("$1850", "en")
    said = str(refused.value)
    assert "USD" in said and "e.g. 1850 " in said


MINOR_UNITS = re.compile(r"\b\d{4,}\b")  # a bare 70000 where €700.00 was meant


@pytest.mark.parametrize(
    ("options", "says", "shows"),
    [
        ({"floor": "700"}, "too high", "€700.00"),
        ({"floor": "-5000"}, "not more than the rent", "-€1,850.00"),
        ({"tolerance": "0.01"}, "at least", "€0.02"),
        ({"tolerance": "2000"}, "smaller than the rent", "€1,850.00"),
        ({"shared": "1900"}, "must be less than the total", "€1,900.00"),
        ({"floor": "£5"}, "in GBP, but the round is in EUR", "£5"),
    ],
)
def test_refusals_show_amounts_in_the_groups_currency_format(
    options: dict[str, str], says: str, shows: str
) -> None:
    with pytest.raises(InvalidSetup, match=re.escape(says)) as refused:
        build_settings(SetupInput.parse("1,850.00 EUR", ROOMS, **options))  # type: ignore[arg-type]
    said = str(refused.value)
    assert shows in said
    assert not MINOR_UNITS.search(said.replace("1,850", "")), said


def test_refusals_follow_the_groups_locale() -> None:
    with pytest.raises(InvalidSetup) as refused:
        build_settings(SetupInput.parse("1.850,00 €", ROOMS, floor="700", locale="de"))
    assert "700,00\xa0€" in str(refused.value)  # CLDR de: decimal comma, symbol after


def test_options_take_a_currency_sign_and_negative_floors_read_as_typed() -> None:
    settings = build_settings(SetupInput.parse("€1850", ROOMS, floor="−€20", shared="€300"))
    assert (settings.floor, settings.shared, settings.currency) == (-2_000, 30_000, "EUR")
