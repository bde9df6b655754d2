"""More rooms than members: the method decides which rooms stay empty.

Fair outcome (following Alkan, Demange & Gale, "Fair allocation of indivisible goods and
money and criteria of justice", Econometrica 59, 1991, who reduce more objects than agents to
equal numbers with fictitious agents that have no preferences): the let rooms' prices sum to
the rent, every room has a price, empty rooms are the cheapest (the fictitious agents do not
envy), and no member would rather move into any other room, empty ones included.
"""

import random

import pytest

from solver import Options, Problem, Walk
from solver.labelling import floor_rooms
from solver.problem import is_placeholder
from solver.simulate import random_tenants, run


def _problem(rooms: int, members: int, rent: int = 300_000, tolerance: int = 100) -> Problem:
    return Problem(
        rent=rent,
        rooms=[f"r{i}" for i in range(rooms)],
        members=[f"m{i}" for i in range(members)],
        tolerance=tolerance,
    )


@pytest.mark.parametrize(("rooms", "members"), [(3, 2), (4, 3), (4, 2), (5, 3), (6, 5)])
@pytest.mark.parametrize("seed", range(6))
def test_quasi_linear_members_envy_no_room_empty_or_let(
    rooms: int, members: int, seed: int
) -> None:
    problem = _problem(rooms, members)
    result = run(problem, random_tenants(problem, "quasi-linear", seed))
    proposal = result.proposal
    result.walk.check()
    assert len(proposal.empty_rooms) == rooms - members
    assert sorted([*proposal.assignment.values(), *proposal.empty_rooms]) == list(range(rooms))
    assert sum(proposal.prices[r] for r in proposal.assignment.values()) == problem.rent
    # envy is measured over every room at its proposed price, empty rooms included
    assert max(result.envy.values()) <= problem.tolerance + 1e-6
    let_prices = [proposal.prices[r] for r in proposal.assignment.values()]
    for e in proposal.empty_rooms:  # empty rooms are (within the tolerance) the cheapest
        assert proposal.prices[e] <= min(let_prices) + problem.tolerance


@pytest.mark.parametrize(("rooms", "members", "mesh"), [(3, 2, 4), (3, 2, 5), (4, 3, 5), (4, 2, 6)])
def test_any_member_answers_terminate_on_small_grids(rooms: int, members: int, mesh: int) -> None:
    # rent == mesh + members * floor keeps grid prices whole; placeholders answer by their rule
    rng = random.Random(rooms * 100 + members * 10 + mesh)
    problem = _problem(rooms, members, rent=mesh, tolerance=10**9)
    for _ in range(150):
        table: dict[tuple[int, ...], int] = {}
        walk = Walk.start(
            problem, options=Options(first_mesh_per_room=mesh, infer_from_money=False)
        )
        while walk.proposal() is None:
            walk.check()
            (q,) = walk.open_questions()
            assert not is_placeholder(q.member)
            room = table.setdefault((q.prices, q.member), rng.choice(q.choices))
            walk.answer(q.id, room)
        proposal = walk.proposal()
        assert proposal is not None
        assert len(proposal.empty_rooms) == rooms - members


def test_floor_rooms_shown_exactly_at_the_floor() -> None:
    problem = Problem(
        rent=90_000, rooms=["a", "b", "c", "d"], members=["x", "y", "z"], floor=-3_000
    )
    from solver.prices import grid_prices

    for x in [(0, 5, 3, 4), (0, 0, 6, 6), (3, 3, 3, 3), (1, 2, 3, 6)]:
        prices = grid_prices(problem, x, 12)
        for room in floor_rooms(x):
            assert prices[room] == problem.floor
        assert all(p > problem.floor for i, p in enumerate(prices) if x[i] > 0)
