"""Pictures: the data handed to the plot is the walk's, and the PNG is a real PNG."""

import struct

import pytest

from bot.adapter.pictures import picture_data, render_png, triangle_xy
from solver import Problem
from solver.simulate import random_tenants, run

PNG_MAGIC = b"\x89PNG\r\n\x1a\n"  # PNG specification (ISO/IEC 15948), section 5.2 signature


def _round(n: int, seed: int = 4):
    problem = Problem(
        rent=186_000,
        rooms=[f"Room {i}" for i in range(n)],
        members=[f"m{i}" for i in range(n)],
        tolerance=100,
    )
    return run(problem, random_tenants(problem, "quasi-linear", seed))


def test_three_rooms_plots_exactly_the_labelled_price_lists() -> None:
    result = _round(3)
    data = picture_data(result.walk)
    labelled = [r.prices for r in result.walk.records if r.vertex is not None]
    asked = {r.prices for r in result.walk.records if r.source == "asked" and r.vertex is not None}
    assert [v.prices for v in data.visits] == labelled
    assert {v.prices for v in data.visits if v.asked} == asked
    assert set(data.final_cell) == {e.prices for e in result.proposal.evidence}
    assert data.proposal == result.proposal.prices


def test_triangle_corners() -> None:
    # corner i of the triangle is the price list where room i costs the whole budget
    assert triangle_xy((900, 0, 0), 0, 900) == (0.0, 0.0)
    assert triangle_xy((0, 900, 0), 0, 900) == (1.0, 0.0)
    x, y = triangle_xy((0, 0, 900), 0, 900)
    assert x == pytest.approx(0.5) and y == pytest.approx(3**0.5 / 2)


@pytest.mark.parametrize("n", [3, 5])
def test_png_is_valid_and_sensibly_sized(n: int) -> None:
    png = render_png(picture_data(_round(n).walk), "EUR")
    assert png.startswith(PNG_MAGIC)
    width, height = struct.unpack(">II", png[16:24])  # IHDR width/height (PNG spec 11.2.2)
    assert 300 <= width <= 2000 and 300 <= height <= 2000
    assert 5_000 < len(png) < 2_000_000
