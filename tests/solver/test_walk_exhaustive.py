"""Exhaustive and brute-force checks of the walk on small price grids.

Every labelling that obeys the boundary rule must lead the walk to a fully labelled cell,
and brute-force enumeration of all cells must find an odd number of fully labelled cells
(Sperner 1928; for the rent-division boundary rule, Su 1999, "Rental Harmony: Sperner's Lemma
in Fair Division", Amer. Math. Monthly 106, section 5).
"""

import random
from collections.abc import Callable
from functools import cache
from itertools import product

import pytest

from solver import Options, Problem, Walk
from solver.labelling import floor_rooms
from solver.triangulation import all_top_cells, x_from_s

Labelling = Callable[[tuple[int, ...]], int]


def _grid(n: int, mesh: int) -> list[tuple[int, ...]]:
    return [x for x in product(range(mesh + 1), repeat=n) if sum(x) == mesh]


def _walk_one_stage(n: int, mesh: int, labelling: Labelling) -> tuple[Walk, list[int]]:
    """Run the walk at exactly ``mesh`` (rent = mesh, so prices equal grid points)."""
    problem = Problem(
        rent=mesh,
        rooms=[f"r{i}" for i in range(n)],
        members=[f"m{i}" for i in range(n)],
        tolerance=10**9,
    )
    walk = Walk.start(problem, options=Options(first_mesh_per_room=mesh, infer_from_money=False))
    assert walk.stages[-1].mesh == mesh
    while walk.proposal() is None:
        walk.check()
        (q,) = walk.open_questions()
        walk.answer(q.id, labelling(q.prices))
    proposal = walk.proposal()
    assert proposal is not None
    return walk, [proposal.assignment[m] for m in problem.members]


@cache
def _cells_as_grid_points(n: int, mesh: int) -> tuple[frozenset[tuple[int, ...]], ...]:
    return tuple(frozenset(x_from_s(v, mesh) for v in cell) for cell in all_top_cells(n, mesh))


def _fully_labelled_cells(n: int, mesh: int, labelling: Labelling) -> list[frozenset]:
    return [
        cell for cell in _cells_as_grid_points(n, mesh) if len({labelling(x) for x in cell}) == n
    ]


def _check(n: int, mesh: int, labelling: Labelling) -> None:
    walk, _ = _walk_one_stage(n, mesh, labelling)
    proposal = walk.proposal()
    assert proposal is not None
    cell = frozenset(e.prices for e in proposal.evidence)
    rooms = [e.room for e in proposal.evidence]
    assert sorted(rooms) == list(range(n))
    assert all(labelling(e.prices) == e.room for e in proposal.evidence)
    complete = _fully_labelled_cells(n, mesh, labelling)
    assert cell in complete
    assert len(complete) % 2 == 1


def _all_labellings(n: int, mesh: int) -> list[Labelling]:
    """Every labelling obeying the boundary rule (one floor room decides; several: any of them)."""
    free_points = [x for x in _grid(n, mesh) if len(floor_rooms(x)) != 1]
    options = [floor_rooms(x) or tuple(range(n)) for x in free_points]
    labellings = []
    for combo in product(*options):
        table = dict(zip(free_points, combo, strict=True))

        def labelling(x: tuple[int, ...], table: dict = table) -> int:
            rooms = floor_rooms(x)
            return rooms[0] if len(rooms) == 1 else table[x]

        labellings.append(labelling)
    return labellings


@pytest.mark.parametrize(("n", "mesh"), [(2, 3), (2, 4), (2, 5), (2, 6), (2, 7), (3, 4)])
def test_every_labelling_small(n: int, mesh: int) -> None:
    for labelling in _all_labellings(n, mesh):
        _check(n, mesh, labelling)


@pytest.mark.slow
def test_every_labelling_three_rooms_mesh_five() -> None:
    labellings = _all_labellings(3, 5)
    assert len(labellings) == 3**6 * 2**3
    for labelling in labellings:
        _check(3, 5, labelling)


@pytest.mark.parametrize(("n", "mesh"), [(4, 5), (4, 7), (5, 6), (5, 7)])
def test_many_random_labellings(n: int, mesh: int) -> None:
    rng = random.Random(n * 100 + mesh)
    grid = _grid(n, mesh)
    for _ in range(60 if n == 4 else 12):
        table = {x: rng.choice(floor_rooms(x) or tuple(range(n))) for x in grid}
        _check(n, mesh, table.__getitem__)
