"""Problem validation: bad input gets a message that says what to change."""

import pytest

from solver import InvalidProblem, Problem

ROOMS = ("North", "South", "Attic")
PEOPLE = ("p1", "p2", "p3")


@pytest.mark.parametrize(
    ("kwargs", "message"),
    [
        ({"rent": 0}, "rent must be a positive"),
        ({"rent": -100}, "rent must be a positive"),
        ({"rent": 10.5}, "rent must be a positive"),
        ({"rooms": ("Only",), "members": ("p1",)}, "2 to 10 rooms"),
        ({"rooms": tuple(f"R{i}" for i in range(11)), "members": tuple(range(11))}, "every member"),
        (
            {
                "rooms": tuple(f"R{i}" for i in range(11)),
                "members": tuple(f"m{i}" for i in range(11)),
            },
            "2 to 10 rooms",
        ),
        ({"members": ("p1", "p1", "p2")}, "repeated: p1"),
        ({"rooms": ("North", "north ", "Attic")}, "repeated: north"),
        ({"rooms": ("North", "", "Attic")}, "non-empty name"),
        ({"rooms": ("North", "x" * 41, "Attic")}, "longer than 40"),
        ({"members": ("p1", "p2", "p3", "p4")}, "3 rooms but 4 members"),
        ({"members": ("p1",), "rooms": ("North", "South")}, "at least 2 members"),
        ({"members": ("p1", "p\x002", "p3")}, "control characters"),
        ({"tolerance": 0}, "tolerance must be at least 2"),
        ({"tolerance": -5}, "tolerance must be at least 2"),
        ({"floor": 100_000}, "floor 100000 is too high"),
        ({"floor": 0.5}, "floor must be a whole number"),
    ],
)
def test_bad_problems_are_refused_with_a_helpful_message(kwargs: dict, message: str) -> None:
    base = {"rent": 300_000, "rooms": ROOMS, "members": PEOPLE}
    with pytest.raises(InvalidProblem, match=message):
        Problem(**{**base, **kwargs})


def test_more_rooms_than_members_gets_placeholders() -> None:
    p = Problem(rent=300_000, rooms=(*ROOMS, "Box"), members=PEOPLE, floor=-1_000)
    assert p.empty_count == 1
    assert p.agents[:3] == PEOPLE and len(p.agents) == 4
    assert p.budget == 303_000  # only the three let rooms carry the floor


def test_round_trip_and_budget() -> None:
    p = Problem(rent=300_000, rooms=ROOMS, members=PEOPLE, tolerance=500, floor=-20_000)
    assert p.budget == 360_000
    assert Problem.from_dict(p.to_dict()) == p
