"""Labels: the rent-division boundary rule and the artificial labels of the start layer.

The boundary rule of rent division. At a price vector where some rooms cost exactly the
floor (free, or the largest rebate), a member takes one of those rooms (the "miserly"
assumption of F. E. Su, "Rental Harmony: Sperner's Lemma in Fair Division", Amer. Math.
Monthly 106, 1999, section 5). In grid terms the label of ``x`` lies in ``floor_rooms(x) =
{i : x[i] == 0}`` whenever that set is non-empty. This is *not* the textbook Sperner condition
(there the label lies in the *support* ``{i : x[i] > 0}``), and it is the reason the walk uses
its own start layer rather than a corner of the simplex.

When exactly one room is at the floor the rule decides the label and nobody is asked. When
several rooms are at the floor the member is asked, but only those rooms are offered: taking
the lowest-numbered one on their behalf could hand them a room they like much less than
another free one, and that error would survive into the proposal.

The start layer (level 0 of the prism) carries artificial labels that cost no question:

    label0(x) = min floor_rooms(x)                 if some room is at the floor,
              = min {i < n-1 : x[i] < t[i]}        otherwise, if that set is non-empty,
              = n - 1                              otherwise,

for a *target* grid point ``t`` (the equal split, a warm-start point, or the previous
proposal when refining). It obeys the boundary rule by construction, and when every
``t[i] >= 1`` and ``mesh > n`` it has exactly one fully labelled cell: the cell
``{t} + {t - e[i] + e[n-1] : i < n-1}``. Sketch of why: a fully labelled cell needs a vertex
with label n-1, so all ``x[i] >= t[i]`` (i < n-1) there, and one with label ``i``, so
``x[i] < t[i]``; coordinates of vertices of one cell differ by at most one, which pins every
vertex. A cell touching the floor would need labels on floor rooms all around it, which forces
every coordinate to be tiny and contradicts ``sum(x) == mesh``. Tests check the count by brute
force on small meshes and many targets.
"""

from __future__ import annotations

from collections.abc import Sequence

from solver.triangulation import Cell, s_from_x


def floor_rooms(x: Sequence[int]) -> tuple[int, ...]:
    """Rooms priced exactly at the floor at grid point ``x``."""
    return tuple(i for i, xi in enumerate(x) if xi == 0)


def start_label(x: Sequence[int], target: Sequence[int]) -> int:
    """Artificial label of a level-0 grid point (see the module docstring)."""
    at_floor = floor_rooms(x)
    if at_floor:
        return at_floor[0]
    n = len(x)
    for i in range(n - 1):
        if x[i] < target[i]:
            return i
    return n - 1


def valid_target(target: Sequence[int], mesh: int) -> bool:
    """True when ``target`` is a grid point whose start layer has a single complete cell."""
    return len(target) >= 2 and sum(target) == mesh and mesh > len(target) and min(target) >= 1


def start_cell(target: Sequence[int], mesh: int) -> Cell:
    """The prism cell sitting on the unique fully labelled cell of the start layer.

    Its level-0 facet is ``{t - e[i] + e[n-1]} + {t}``; in cumulative coordinates that is the
    chain from ``s(t) - (1, ..., 1)`` stepping along axes 0, 1, ..., n-2, and the last step
    (axis n-1, the level) reaches ``t`` on level 1: the first question is asked at the target.
    """
    s_target = s_from_x(target, 0)
    n = len(target)
    base = (*tuple(v - 1 for v in s_target[:-1]), 0)
    return Cell(base, tuple(range(n)))
