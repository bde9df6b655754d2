"""split_exactly: the one rounding function for money."""

from fractions import Fraction

import pytest
from hypothesis import given
from hypothesis import strategies as st

from solver.errors import InvalidProblem
from solver.money import format_minor, split_exactly


def test_textbook_largest_remainder_example() -> None:
    # Largest remainder (Hamilton) method with the Hare quota: six parties with 47000, 16000,
    # 15800, 12000, 6100 and 3100 votes share 10 seats as 5, 2, 1, 1, 1, 0. This is the worked
    # example of the Wikipedia article "Largest remainder method" (value from memory).
    votes = [47000, 16000, 15800, 12000, 6100, 3100]
    shares = [Fraction(v * 10, sum(votes)) for v in votes]
    assert split_exactly(shares, 10) == (5, 2, 1, 1, 1, 0)


def test_ties_go_to_the_lower_index() -> None:
    assert split_exactly([Fraction(1, 3)] * 3, 1) == (1, 0, 0)
    assert split_exactly([Fraction(2, 3)] * 3, 2) == (1, 1, 0)


def test_shares_that_do_not_add_up_are_refused() -> None:
    with pytest.raises(InvalidProblem, match="sum exactly"):
        split_exactly([Fraction(1, 2), Fraction(1, 3)], 1)


@given(
    st.lists(st.integers(min_value=-(10**6), max_value=10**6), min_size=2, max_size=10),
    st.integers(min_value=1, max_value=10**4),
)
def test_exact_total_and_less_than_one_unit_off(numerators: list[int], denominator: int) -> None:
    shares = [Fraction(k, denominator) for k in numerators]
    total = sum(shares, Fraction(0))
    # make the total integral by moving the fractional excess onto the first share
    shares[0] -= total - round(total)
    result = split_exactly(shares, round(total))
    assert sum(result) == round(total)
    assert all(abs(r - s) < 1 for r, s in zip(result, shares, strict=True))
    # integral shares never move (keeps floor-priced rooms exactly at the floor)
    assert all(r == s for r, s in zip(result, shares, strict=True) if s.denominator == 1)


@given(st.lists(st.fractions(min_value=0, max_value=1000), min_size=2, max_size=8))
def test_largest_remainders_win(raw: list[Fraction]) -> None:
    total = sum(raw, Fraction(0))
    shares = list(raw)
    shares[-1] += -total + (total.__ceil__())
    result = split_exactly(shares, total.__ceil__())
    rounded_up = [i for i, (r, s) in enumerate(zip(result, shares, strict=True)) if r > s]
    kept_down = [i for i, (r, s) in enumerate(zip(result, shares, strict=True)) if r < s]
    for up in rounded_up:
        for down in kept_down:
            assert shares[up] - (result[up] - 1) >= shares[down] - result[down]


def test_format_minor() -> None:
    assert format_minor(123457) == "1234.57"
    assert format_minor(-5) == "-0.05"
    assert format_minor(1500, decimals=0) == "1500"
