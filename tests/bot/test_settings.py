"""Set-up input: parsed once, then converted exactly to minor units; clear refusals."""

from __future__ import annotations

import pytest

from bot.rounds.errors import InvalidSetup
from bot.rounds.round_settings import build_settings, check_rent, check_rooms
from bot.rounds.setup_input import SetupInput, currency_decimals, parse_rent, split_names


def test_currency_decimals_match_iso_4217() -> None:
    # ISO 4217 minor units (published list): EUR 2, JPY 0, BHD 3, via Babel's CLDR data.
    assert (currency_decimals("EUR"), currency_decimals("JPY"), currency_decimals("BHD")) == (
        2,
        0,
        3,
    )


@pytest.mark.parametrize(
    ("text", "minor", "code"),
    [
        ("1850.00 EUR", 185_000, "EUR"),
        ("EUR 1850", 185_000, "EUR"),
        ("1 850,5 eur", 185_050, "EUR"),
        ("240000 JPY", 240_000, "JPY"),
        ("410.125 BHD", 410_125, "BHD"),
    ],
)
def test_rent_becomes_exact_minor_units(text: str, minor: int, code: str) -> None:
    money = check_rent(parse_rent(text), None)
    assert (money.minor, money.currency) == (minor, code)


@pytest.mark.parametrize(
    ("text", "says"),
    [
        ("-1850 EUR", "more than zero"),
        ("0 EUR", "more than zero"),
        ("0.00 EUR", "more than zero"),
        ("10000001 EUR", "implausibly large"),
        ("1850.005 EUR", "2 decimal places"),
        ("1850.5 JPY", "0 decimal places"),
        ("eighteen EUR", "not an amount I can read"),
        ("1850", "which currency"),
        ("1850 XQQ", "not a currency code"),
        ("1850 EUR GBP", "one currency code"),
        ("abc EUR", "not an amount I can read"),
    ],
)
def test_bad_rent_is_refused_with_a_reason(text: str, says: str) -> None:
    with pytest.raises(InvalidSetup, match=says):
        check_rent(parse_rent(text), None)


@pytest.mark.parametrize(
    ("rooms", "says"),
    [
        (["Loft"], "2 to 10 rooms"),
        ([f"Room {i}" for i in range(11)], "2 to 10 rooms"),
        (["Loft", "  "], "room 2 has no name"),
        (["Loft", "x" * 41], "at most 40"),
        (["Loft", "loft "], "must differ"),
    ],
)
def test_bad_rooms_are_refused(rooms: list[str], says: str) -> None:
    with pytest.raises(InvalidSetup, match=says):
        check_rooms(split_names(rooms))


def test_rooms_from_one_line_and_default_tolerance_is_one_major_unit() -> None:
    settings = build_settings(SetupInput.parse("1850 EUR", "Loft, Attic ,Courtyard"))
    assert settings.rooms == ("Loft", "Attic", "Courtyard")
    assert settings.tolerance == 100
    assert (
        build_settings(SetupInput.parse("240000 JPY", ["A", "B"])).tolerance == 2
    )  # solver minimum


def test_floor_too_high_is_refused_in_the_solvers_words() -> None:
    with pytest.raises(InvalidSetup, match="floor"):
        build_settings(SetupInput.parse("100 EUR", ["A", "B"], floor="60"))


@pytest.mark.parametrize("text", ["abc EUR", "EUR abc", "abc def EUR"])
def test_a_word_for_the_amount_is_a_bad_amount_not_a_second_currency(text: str) -> None:
    with pytest.raises(InvalidSetup, match="not an amount I can read") as refused:
        check_rent(parse_rent(text), None)
    assert "currency code" not in str(refused.value)


@pytest.mark.parametrize(
    ("text", "says"),
    [("1850 EUR GBP", "give one currency code"), ("1850 EUX", "not a currency code I know")],
)
def test_currency_mistakes_are_still_named(text: str, says: str) -> None:
    with pytest.raises(InvalidSetup, match=says):
        check_rent(parse_rent(text), None)
