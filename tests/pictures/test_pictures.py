"""Pictures: the group's picture shows the proposal and settings only, and the PNG is a PNG."""

import json
import struct
from dataclasses import fields

import pytest

from bot.adapter.pictures import (
    PictureData,
    picture_data,
    render_png,
    tolerance_band,
    triangle_xy,
)
from bot.adapter.walk_picture import CAPTION, CAPTION_LIMIT
from bot.rounds.caution import CAUTION
from solver import Problem, Walk
from solver.simulate import random_tenants, run

PNG_MAGIC = b"\x89PNG\r\n\x1a\n"  # PNG specification (ISO/IEC 15948), section 5.2 signature


def _round(n: int, seed: int = 4, members: int | None = None):
    problem = Problem(
        rent=186_000,
        rooms=[f"Room {i}" for i in range(n)],
        members=[f"m{i}" for i in range(members or n)],
        tolerance=100,
    )
    return run(problem, random_tenants(problem, "quasi-linear", seed))


def _other_answers(walk: Walk) -> Walk:
    """The same round and proposal, but every private answer and the evidence changed.

    Each record's room (asked, inferred or at the floor) moves to the next room, its price list
    and the evidence behind the proposal are shifted, and the walk's stages are dropped: what a
    group picture shows may depend on none of these.
    """
    data = json.loads(walk.to_json())
    n = len(data["problem"]["rooms"])
    for record in data["records"]:
        record[3] = [p + 1 for p in record[3]]
        record[4] = (record[4] + 1) % n
    for item in data["proposal"]["evidence"]:
        item[1] = (item[1] + 1) % n
        item[2] = [p - 7 for p in item[2]]
    data["stages"] = data["stages"][-1:]
    return Walk.from_json(json.dumps(data))


@pytest.mark.parametrize(("n", "members"), [(3, 3), (4, 4), (4, 3), (5, 5)])
def test_group_picture_data_does_not_depend_on_anyones_answers(n: int, members: int) -> None:
    walk = _round(n, members=members).walk
    changed = _other_answers(walk)
    assert [r.room for r in changed.records] != [r.room for r in walk.records]
    assert changed.proposal().prices == walk.proposal().prices  # type: ignore[union-attr]
    assert picture_data(changed) == picture_data(walk)
    # ... and the drawing is made from that data alone (rendering is deterministic)
    assert render_png(picture_data(changed), "EUR") == render_png(picture_data(walk), "EUR")


def test_group_picture_data_is_the_proposal_and_the_settings() -> None:
    result = _round(3)
    data = picture_data(result.walk)
    problem = result.walk.problem
    # nothing per member, nothing per question: only settings and the proposal's prices
    assert {f.name for f in fields(PictureData)} == {
        "rooms",
        "rent",
        "floor",
        "tolerance",
        "even_split",
        "proposal",
        "empty_rooms",
        "band",  # whether the split came from answers or from a rent change: no answer
    }
    assert data.proposal == result.proposal.prices
    assert (data.rooms, data.rent, data.floor, data.tolerance) == (
        problem.rooms,
        problem.rent,
        problem.floor,
        problem.tolerance,
    )
    assert data.even_split == (62_000, 62_000, 62_000)


def test_even_split_leaves_out_the_empty_rooms_and_hits_the_rent() -> None:
    result = _round(4, members=3)
    data = picture_data(result.walk)
    assert data.empty_rooms == tuple(result.proposal.empty_rooms) != ()
    assert [i for i, p in enumerate(data.even_split) if p is None] == list(data.empty_rooms)
    assert sum(p for p in data.even_split if p is not None) == data.rent


def test_tolerance_band_keeps_the_total_and_moves_each_room_by_at_most_the_tolerance() -> None:
    proposal = (60_000, 61_000, 65_000)
    band = tolerance_band(proposal, 100)
    assert len(set(band)) == 6
    for corner in band:
        assert sum(corner) == sum(proposal)
        assert max(abs(a - b) for a, b in zip(corner, proposal, strict=True)) == 100


def test_caption_fits_and_carries_the_caution() -> None:
    assert len(CAPTION) <= CAPTION_LIMIT  # Bot API sendPhoto: caption 0-1024 characters
    assert CAUTION in CAPTION
    assert "private" in CAPTION


def test_triangle_corners() -> None:
    # corner i of the triangle is the price list where room i costs the whole budget
    assert triangle_xy((900, 0, 0), 0, 900) == (0.0, 0.0)
    assert triangle_xy((0, 900, 0), 0, 900) == (1.0, 0.0)
    x, y = triangle_xy((0, 0, 900), 0, 900)
    assert x == pytest.approx(0.5) and y == pytest.approx(3**0.5 / 2)


@pytest.mark.parametrize(("n", "members"), [(3, 3), (5, 5), (4, 3)])
def test_png_is_valid_and_sensibly_sized(n: int, members: int) -> None:
    png = render_png(picture_data(_round(n, members=members).walk), "EUR")
    assert png.startswith(PNG_MAGIC)
    width, height = struct.unpack(">II", png[16:24])  # IHDR width/height (PNG spec 11.2.2)
    assert 300 <= width <= 2000 and 300 <= height <= 2000  # sensible for a phone (common practice)
    assert 5_000 < len(png) < 2_000_000
