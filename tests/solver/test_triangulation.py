"""The Kuhn/Freudenthal prism triangulation and the owner labelling."""

from itertools import combinations
from math import comb

import networkx as nx
import pytest

from solver.triangulation import (
    Cell,
    all_top_cells,
    check_cell,
    in_region,
    owner_index,
    s_from_x,
    x_from_s,
)


@pytest.mark.parametrize(("n", "mesh"), [(2, 5), (3, 4), (3, 6), (4, 3), (4, 4), (5, 3)])
def test_cell_count_and_cover(n: int, mesh: int) -> None:
    cells = list(all_top_cells(n, mesh))
    # Handbook fact: the Freudenthal (Kuhn) subdivision of a d-simplex into a grid of mesh m
    # has m**d cells (e.g. Todd 1976, "The Computation of Fixed Points and Applications", ch. 2).
    assert len(cells) == mesh ** (n - 1)
    vertices = {v for cell in cells for v in cell}
    # every grid point of the simplex is used: C(mesh + n - 1, n - 1) of them (stars and bars)
    assert len(vertices) == comb(mesh + n - 1, n - 1)


@pytest.mark.parametrize(("n", "mesh"), [(3, 5), (4, 4), (5, 3)])
def test_pseudomanifold_and_connected(n: int, mesh: int) -> None:
    cells = [frozenset(c) for c in all_top_cells(n, mesh)]
    faces: dict[frozenset, list[int]] = {}
    for i, cell in enumerate(cells):
        for face in combinations(sorted(cell), n - 1):
            faces.setdefault(frozenset(face), []).append(i)
    assert max(len(owners) for owners in faces.values()) == 2
    for face, owners in faces.items():
        if len(owners) == 1:  # a boundary face lies in one facet x[i] == 0 of the simplex
            xs = [x_from_s(v, mesh) for v in face]
            assert any(all(x[i] == 0 for x in xs) for i in range(n))
    graph = nx.Graph()
    graph.add_nodes_from(range(len(cells)))
    graph.add_edges_from(tuple(o) for o in faces.values() if len(o) == 2)
    # reference: networkx's connectivity check (the dual graph of a triangulated ball)
    assert nx.is_connected(graph)


@pytest.mark.parametrize(("n", "mesh"), [(2, 6), (3, 5), (4, 4), (5, 3), (6, 2)])
def test_every_cell_has_one_vertex_per_member(n: int, mesh: int) -> None:
    for cell in all_top_cells(n, mesh):
        assert sorted(owner_index(v) for v in cell) == list(range(n))


def test_pivot_is_reversible_and_keeps_the_facet() -> None:
    cell = Cell((1, 2, 4, 0), (2, 0, 3, 1))
    check_cell(cell, 6)
    for drop in range(5):
        nxt = cell.pivot(drop)
        kept = set(cell.vertices()) - {cell.vertices()[drop]}
        assert kept <= set(nxt.vertices())
        back_index = next(i for i, v in enumerate(nxt.vertices()) if v not in kept)
        assert nxt.pivot(back_index) == cell


def test_coordinates_round_trip() -> None:
    for x in [(3, 0, 2), (0, 0, 5), (1, 1, 1, 2)]:
        assert x_from_s(s_from_x(x, 1), sum(x)) == x
    assert in_region((0, 2, 5, 1), 5)
    assert not in_region((3, 2, 5, 1), 5)
    assert not in_region((0, 2, 5, 2), 5)
