"""Kuhn/Freudenthal triangulation of the price simplex and of the restart prism.

Price grid. With ``n`` rooms, a mesh ``N`` and integer ``x >= 0`` with ``sum(x) == N``, the
grid point ``x`` stands for the price vector ``floor + (rent - n*floor) * x / N``. Room ``i`` is
*at the floor* (free, or the largest rebate) exactly when ``x[i] == 0``.

Coordinates. We work in cumulative coordinates ``s[k] = x[0] + ... + x[k]`` for
``k = 0..n-2``, plus a level ``z`` in {0, 1}: a vertex is the tuple ``(s[0], ..., s[n-2], z)``
of length ``n``. In these coordinates the grid is ``Z^n`` restricted to the convex region

    0 <= s[0] <= s[1] <= ... <= s[n-2] <= N,   0 <= z <= 1,

which is a union of cells of Kuhn's triangulation of ``Z^n`` (H. W. Kuhn, "Some combinatorial
lemmas in topology", IBM J. Res. Dev. 4, 1960; the same triangulation is called Freudenthal's
after H. Freudenthal, Ann. of Math. 43, 1942). A cell is a base vertex ``b`` and a permutation
``pi`` of the ``n`` axes; its vertices are ``b``, ``b + e[pi0]``, ``b + e[pi0] + e[pi1]``, ... .
The layer ``z = 0`` and the layer ``z = 1`` are each the Freudenthal triangulation of the price
simplex at mesh ``N``; the cells in between triangulate the prism (simplex x [0, 1]) used by
Merrill's restart method (O. H. Merrill, "Applications and extensions of an algorithm that
computes fixed points of certain upper semi-continuous point to set mappings", PhD thesis,
University of Michigan, 1972; see also M. J. Todd, "The Computation of Fixed Points and
Applications", Springer LNEMS 124, 1976, for the pivot rules used below).

Owners. A level-1 vertex belongs to member ``sum(s) mod n``. Any two vertices of a level-1
cell differ by a non-empty set of distinct unit steps in ``s``, at most ``n - 1`` of them, so
their owner numbers differ by 1..n-1 modulo ``n``: every level-1 cell has exactly one vertex
per member (the owner-labelling of F. E. Su, "Rental Harmony: Sperner's Lemma in Fair
Division", Amer. Math. Monthly 106, 1999).
"""

from __future__ import annotations

from collections.abc import Iterator, Sequence
from dataclasses import dataclass
from itertools import pairwise, permutations, product

from solver.errors import BrokenInvariant

Vertex = tuple[int, ...]


def x_from_s(vertex: Vertex, mesh: int) -> tuple[int, ...]:
    """Grid point ``x`` (one entry per room) of a prism vertex; the level is dropped."""
    s = vertex[:-1]
    x = [s[0]]
    x.extend(s[k] - s[k - 1] for k in range(1, len(s)))
    x.append(mesh - s[-1])
    return tuple(x)


def s_from_x(x: Sequence[int], level: int) -> Vertex:
    """Prism vertex of grid point ``x`` at ``level`` (the inverse of :func:`x_from_s`)."""
    s: list[int] = []
    running = 0
    for value in x[:-1]:
        running += value
        s.append(running)
    return (*s, level)


def level(vertex: Vertex) -> int:
    """0 for the artificial start layer, 1 for the layer where members answer."""
    return vertex[-1]


def owner_index(vertex: Vertex) -> int:
    """Index of the member who owns a level-1 vertex (sum of cumulative coordinates mod n)."""
    n = len(vertex)
    return sum(vertex[:-1]) % n


def in_region(vertex: Vertex, mesh: int) -> bool:
    """True when the vertex lies in the prism: a real grid point on level 0 or 1."""
    s = vertex[:-1]
    if vertex[-1] not in (0, 1) or s[0] < 0 or s[-1] > mesh:
        return False
    return all(s[k - 1] <= s[k] for k in range(1, len(s)))


@dataclass(frozen=True, slots=True)
class Cell:
    """A full-dimensional cell of the prism: a base vertex and an order of unit steps."""

    base: Vertex
    steps: tuple[int, ...]

    @property
    def dimension(self) -> int:
        return len(self.base)

    def vertices(self) -> list[Vertex]:
        """The ``dimension + 1`` vertices, in chain order."""
        current = list(self.base)
        out = [tuple(current)]
        for axis in self.steps:
            current[axis] += 1
            out.append(tuple(current))
        return out

    def pivot(self, drop: int) -> Cell:
        """The neighbouring cell across the facet opposite vertex number ``drop``.

        Kuhn's pivot rules: dropping the base moves the base one step and rotates the steps
        left; dropping the top moves the base one step back and rotates right; dropping an
        inner vertex swaps the two steps on either side of it.
        """
        d = self.dimension
        if not 0 <= drop <= d:
            raise BrokenInvariant(f"cannot drop vertex {drop} of a {d}-cell")
        if drop == 0:
            base = list(self.base)
            base[self.steps[0]] += 1
            return Cell(tuple(base), self.steps[1:] + self.steps[:1])
        if drop == d:
            base = list(self.base)
            base[self.steps[-1]] -= 1
            return Cell(tuple(base), self.steps[-1:] + self.steps[:-1])
        steps = list(self.steps)
        steps[drop - 1], steps[drop] = steps[drop], steps[drop - 1]
        return Cell(self.base, tuple(steps))


def top_facet(vertices: Sequence[Vertex]) -> bool:
    """True when every vertex lies on level 1 (a cell of the members' simplex)."""
    return all(level(v) == 1 for v in vertices)


def check_cell(cell: Cell, mesh: int) -> None:
    """Invariant checker: the cell is a proper prism cell and its level-1 owners are distinct.

    Tests call this after every step of the walk (in the spirit of sortedcontainers'
    ``_check``); the walk itself calls it on every pivot, because a silent geometry bug would
    hand people a wrong rent split.
    """
    n = cell.dimension
    if sorted(cell.steps) != list(range(n)):
        raise BrokenInvariant(f"steps {cell.steps} are not a permutation of 0..{n - 1}")
    verts = cell.vertices()
    outside = [v for v in verts if not in_region(v, mesh)]
    if outside:
        raise BrokenInvariant(f"cell vertices {outside} lie outside the simplex at mesh {mesh}")
    for a, b in pairwise(verts):
        if sum(abs(p - q) for p, q in zip(a, b, strict=True)) != 1:
            raise BrokenInvariant(f"vertices {a} and {b} are not adjacent")
    top = [v for v in verts if level(v) == 1]
    owners = [owner_index(v) for v in top]
    if len(set(owners)) != len(owners):
        raise BrokenInvariant(f"level-1 vertices {top} share an owner: {owners}")


def all_top_cells(n: int, mesh: int) -> Iterator[list[Vertex]]:
    """Every cell of the level-1 simplex at ``mesh`` (for brute-force checks in tests)."""
    for s in product(range(mesh + 1), repeat=n - 1):
        base = (*s, 1)
        for perm in permutations(range(n - 1)):
            cell = Cell(base, (*perm, n - 1))
            verts = cell.vertices()[:-1]
            if all(in_region(v, mesh) for v in verts):
                yield verts
