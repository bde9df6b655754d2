"""How simulated flatmates read amounts, and how the demo reads its tolerance.

Outside reference: Babel's CLDR data writes the amounts (as the bot does), and reading them
back must give the exact cents; no value here comes from our own formatting code.
"""

from __future__ import annotations

import argparse
from decimal import Decimal

import pytest
from babel.numbers import format_currency

from bot.demo.cli import tolerance_minor
from bot.demo.flatmates import UnreadableMessage, amount_shown, prices_shown


@pytest.mark.parametrize("cents", [0, 5, 99, 100, 123_456, 1_000_000_01])
@pytest.mark.parametrize("locale", ["en", "de", "fr"])
def test_amounts_written_by_babel_read_back_exactly(cents: int, locale: str) -> None:
    shown = format_currency(Decimal(cents).scaleb(-2), "EUR", locale=locale)
    assert amount_shown(shown, 2, locale) == cents


def test_prices_are_read_per_room_even_when_names_overlap() -> None:
    text = "Question 2:\n• Garden room: €1,000.05\n• Box room: €480.00\nwhich room?"
    assert prices_shown(text, ["Box room", "Garden room"], 2) == (48_000, 100_005)
    with pytest.raises(UnreadableMessage):
        prices_shown(text, ["Attic"], 2)


def test_tolerance_is_exact_cents() -> None:
    assert tolerance_minor("1.00") == 100
    assert tolerance_minor("0.25") == 25
    for bad in ("0.005", "0.01", "ten"):  # under the solver's minimum of 2 cents, or not cents
        with pytest.raises(argparse.ArgumentTypeError):
            tolerance_minor(bad)
