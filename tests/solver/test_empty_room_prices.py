"""Empty rooms are priced at their exact price rounded *up*, and nobody wants to move in.

``solver.prices.settle_prices`` documents the direction: an empty room keeps its exact price
rounded up, because a higher price only makes moving there less tempting. The exact price is
recomputed here from the formula in ``solver/prices.py`` (:mod:`tests.solver.final_cell`).
Then, end to end: in every proposal with empty rooms the prices are one of the documented
candidates, and no simulated member would rather move into an empty room at its price, by
their own values (quasi-linear tenants; the fair-outcome notion of Alkan, Demange & Gale,
"Fair allocation of indivisible goods and money and criteria of justice", Econometrica 59,
1991: envy-freeness towards unassigned objects too).
"""

from fractions import Fraction
from math import ceil

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from solver import Problem, Walk
from solver.prices import settle_prices
from solver.simulate import QuasiLinear, answer_until_proposal, random_tenants
from tests.solver.final_cell import candidates, exact_prices


def _problem(rooms: int, members: int, rent: int, floor: int = 0, tolerance: int = 100) -> Problem:
    return Problem(
        rent=rent,
        rooms=[f"r{i}" for i in range(rooms)],
        members=[f"m{i}" for i in range(members)],
        tolerance=tolerance,
        floor=floor,
    )


@st.composite
def _settings(draw: st.DrawFn) -> tuple[Problem, tuple[Fraction, ...], int, tuple[int, ...]]:
    members = draw(st.integers(2, 5))
    rooms = members + draw(st.integers(1, 3))
    floor = draw(st.sampled_from([0, -2_000, 500]))
    rent = draw(st.integers(10_000, 500_000))
    problem = _problem(rooms, members, rent, floor)
    mesh = draw(st.integers(rooms + 1, 200))
    cuts = sorted(draw(st.lists(st.integers(0, mesh), min_size=rooms - 1, max_size=rooms - 1)))
    x = tuple(Fraction(b - a) for a, b in zip([0, *cuts], [*cuts, mesh], strict=True))
    # the walk leaves the cheapest rooms empty; any choice must still round the same way
    empty = tuple(sorted(draw(st.permutations(range(rooms)))[: rooms - members]))
    return problem, x, mesh, empty


@settings(max_examples=200, deadline=None)
@given(case=_settings())
def test_empty_rooms_are_rounded_up_and_let_rooms_sum_to_the_rent(case: tuple) -> None:
    problem, x, mesh, empty = case
    prices = settle_prices(problem, x, mesh, empty)
    exact = exact_prices(problem, x, mesh)
    for room in empty:
        assert prices[room] == ceil(exact[room])
        assert exact[room] <= prices[room] < exact[room] + 1
    let = [r for r in range(problem.size) if r not in empty]
    assert sum(prices[r] for r in let) == problem.rent


@pytest.mark.parametrize(
    ("x", "expected_empty_price"),
    [
        # rent 1000, 3 rooms, 2 members, mesh 7: the exact price of room 2 is
        # 1000 * (x2 + min(x) / 2) / 7 (worked out by hand from the documented formula)
        ((3, 3, 1), 215),  # 1500 / 7 = 214.28...: up to 215, not down to 214
        ((2, 3, 2), 429),  # 3000 / 7 = 428.57...: up to 429
    ],
)
def test_hand_worked_empty_room_prices(x: tuple[int, ...], expected_empty_price: int) -> None:
    problem = _problem(3, 2, 1000, tolerance=10**6)
    prices = settle_prices(problem, x, 7, (2,))
    assert prices[2] == expected_empty_price


@pytest.mark.parametrize(("rooms", "members"), [(3, 2), (4, 3), (5, 3), (4, 2)])
@pytest.mark.parametrize("seed", range(5))
def test_nobody_would_rather_move_into_an_empty_room(rooms: int, members: int, seed: int) -> None:
    # tolerance 1000 on rent 300000 keeps these runs short (empty rooms at tolerance 100 take
    # seconds each); the proposal is still checked exactly
    problem = _problem(rooms, members, 300_000, tolerance=1_000)
    tenants = random_tenants(problem, "quasi-linear", seed)
    walk = Walk.start(problem)
    answer_until_proposal(walk, tenants)
    proposal = walk.proposal()
    assert proposal is not None and len(proposal.empty_rooms) == rooms - members
    # the prices are one of the documented candidates (empty rooms rounded up)
    assert proposal.prices in [c.prices for c in candidates(walk)]
    for e in proposal.evidence:
        tenant = tenants[e.member]
        assert isinstance(tenant, QuasiLinear)
        own = tenant.values[e.room] - proposal.prices[e.room]
        for room in proposal.empty_rooms:
            moved = tenant.values[room] - proposal.prices[room]
            # Su 1999 / solver/envy.py: a quasi-linear member who took e.room at e.prices
            # envies at most the certified bound, which is within the tolerance
            assert moved - own <= proposal.envy_bound + 1e-6
            assert proposal.envy_bound <= problem.tolerance
