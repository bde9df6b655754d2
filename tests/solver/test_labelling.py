"""The start layer: artificial labels obey the boundary rule and have one complete cell."""

import random
from itertools import permutations, product

import pytest

from solver.labelling import floor_rooms, start_cell, start_label, valid_target
from solver.triangulation import Cell, in_region, x_from_s


def _start_layer_cells(n: int, mesh: int) -> list[list[tuple[int, ...]]]:
    cells = []
    for s in product(range(mesh + 1), repeat=n - 1):
        for perm in permutations(range(n - 1)):
            verts = Cell((*s, 0), (*perm, n - 1)).vertices()[:-1]
            if all(in_region(v, mesh) for v in verts):
                cells.append(verts)
    return cells


def _targets(n: int, mesh: int) -> list[tuple[int, ...]]:
    return [t for t in product(range(1, mesh), repeat=n) if sum(t) == mesh]


CASES = [(2, m) for m in range(3, 9)] + [(3, m) for m in range(4, 8)] + [(4, 5), (4, 6), (5, 6)]


@pytest.mark.parametrize(("n", "mesh"), CASES)
def test_exactly_one_complete_cell_for_every_target(n: int, mesh: int) -> None:
    cells = _start_layer_cells(n, mesh)
    for target in _targets(n, mesh):
        assert valid_target(target, mesh)
        complete = [
            sorted(c)
            for c in cells
            if len({start_label(x_from_s(v, mesh), target) for v in c}) == n
        ]
        expected = sorted(start_cell(target, mesh).vertices()[:-1])
        assert complete == [expected], (target, complete)


@pytest.mark.parametrize("seed", range(5))
def test_larger_meshes_sampled(seed: int) -> None:
    rng = random.Random(seed)
    n, mesh = 4, 9
    cells = _start_layer_cells(n, mesh)
    for _ in range(4):
        cut = sorted(rng.sample(range(1, mesh), n - 1))
        target = tuple(b - a for a, b in zip([0, *cut], [*cut, mesh], strict=True))
        complete = [
            c for c in cells if len({start_label(x_from_s(v, mesh), target) for v in c}) == n
        ]
        assert len(complete) == 1


@pytest.mark.parametrize(("n", "mesh"), [(3, 6), (4, 5)])
def test_artificial_labels_obey_the_boundary_rule(n: int, mesh: int) -> None:
    for target in _targets(n, mesh):
        for x in product(range(mesh + 1), repeat=n):
            if sum(x) == mesh and floor_rooms(x):
                assert start_label(x, target) in floor_rooms(x)


def test_targets_that_cannot_start_are_recognised() -> None:
    assert not valid_target((0, 3, 3), 6)
    assert not valid_target((1, 1, 1), 3)  # mesh must exceed the room count
    assert not valid_target((2, 2, 2), 7)
