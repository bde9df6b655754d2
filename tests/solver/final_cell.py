"""An independent recomputation of a proposal from the final cell of a finished walk.

Tests use it to check the walk's choice of proposed point against the documented rules,
written out again here rather than imported from ``solver``:

* the final cell's level-1 facet holds one vertex per agent; vertex ``(s[0..n-2], level)`` is
  the grid point ``x[0] = s[0], x[k] = s[k] - s[k-1], x[n-1] = mesh - s[n-2]`` (cumulative
  coordinates, as in Kuhn's triangulation);
* the exact price of room ``i`` at a (possibly fractional) point ``x`` is
  ``floor + budget * (x[i] + e/m * min(x)) / mesh`` with ``e`` empty rooms and ``m`` members
  (``solver/prices.py``, docstring of ``exact_prices``);
* proposal prices: let rooms share any shortfall equally and are rounded with
  ``split_exactly`` to sum to the rent; empty rooms keep their exact price *rounded up*;
* candidates are the barycentre and then every vertex of the facet (``solver/envy.py``);
  the proposal is the candidate with the smallest envy bound, the first one on ties;
* envy bound of prices ``q`` (``solver/envy.py``): the largest
  ``(P[j] - q[j]) - (P[r] - q[r])`` over each member's evidence (took ``r`` at ``P``) and rooms
  ``j``, and at least 0.
"""

from collections.abc import Sequence
from dataclasses import dataclass
from fractions import Fraction
from math import ceil

from solver import Problem, Walk
from solver.money import split_exactly
from solver.protocol import Evidence, Proposal

Point = tuple[Fraction, ...]


@dataclass(frozen=True)
class Candidate:
    point: Point
    prices: tuple[int, ...]
    bound: int


def grid_point(vertex: Sequence[int], mesh: int) -> Point:
    s = list(vertex[:-1])
    x = [s[0], *(s[k] - s[k - 1] for k in range(1, len(s))), mesh - s[-1]]
    return tuple(Fraction(v) for v in x)


def exact_prices(problem: Problem, x: Point, mesh: int) -> list[Fraction]:
    lift = Fraction(problem.empty_count, len(problem.members)) * min(x)
    return [problem.floor + Fraction(problem.budget, mesh) * (xi + lift) for xi in x]


def proposal_prices(walk: Walk, x: Point, mesh: int, empty: Sequence[int]) -> tuple[int, ...]:
    problem = walk.problem
    exact = exact_prices(problem, x, mesh)
    let = [i for i in range(problem.size) if i not in empty]
    shortfall = (problem.rent - sum((exact[i] for i in let), Fraction(0))) / len(let)
    let_prices = split_exactly([exact[i] + shortfall for i in let], problem.rent)
    prices = [ceil(v) for v in exact]
    for i, price in zip(let, let_prices, strict=True):
        prices[i] = price
    return tuple(prices)


def envy_bound(evidence: Sequence[Evidence], prices: Sequence[int]) -> int:
    worst = 0
    for e in evidence:
        for j in range(len(prices)):
            drift = (e.prices[j] - prices[j]) - (e.prices[e.room] - prices[e.room])
            worst = max(worst, drift)
    return worst


def final_facet(walk: Walk) -> list[tuple[int, ...]]:
    """The level-1 vertices of the walk's last cell, in the cell's order."""
    cell = walk.cell
    vertices = [cell.base]
    for axis in cell.steps:
        step = list(vertices[-1])
        step[axis] += 1
        vertices.append(tuple(step))
    return [v for v in vertices if v[-1] == 1]


def candidates(walk: Walk) -> list[Candidate]:
    """Barycentre first, then the facet's vertices, each with its prices and envy bound."""
    proposal = walk.proposal()
    assert proposal is not None
    mesh = walk.stages[-1].mesh
    points = [grid_point(v, mesh) for v in final_facet(walk)]
    assert len(points) == walk.problem.size
    centre = tuple(sum(coord, Fraction(0)) / len(points) for coord in zip(*points, strict=True))
    found = []
    for x in [centre, *points]:
        prices = proposal_prices(walk, x, mesh, proposal.empty_rooms)
        found.append(Candidate(x, prices, envy_bound(proposal.evidence, prices)))
    return found


def check_evidence_sits_on_the_facet(walk: Walk, proposal: Proposal) -> None:
    """Each member's evidence was recorded in the last stage at a vertex of the final facet."""
    facet = set(final_facet(walk))
    last = len(walk.stages) - 1
    for e in proposal.evidence:
        where = {
            r.vertex
            for r in walk.records
            if r.stage == last
            and r.vertex is not None
            and (r.member, r.room, r.prices) == (e.member, e.room, e.prices)
        }
        assert len(where) == 1 and where <= facet, (e, where)
