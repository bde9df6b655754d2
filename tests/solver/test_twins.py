"""Possible twins asked at two points, and the second stage of the largest-margin prices."""

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import linprog

from solver.centre_prices import largest_margin_prices
from solver.envy import Choice, envy_bound
from solver.learning import ValueSet
from solver.problem import Problem
from solver.search import start
from solver.simulate import QuasiLinear, tie_tenants
from solver.twins import probe_asks, twin_pairs

ROOMS = 3


def _one_taste_explains(answers: list[tuple[tuple[int, ...], int]]) -> bool:
    """Independent check with scipy's HiGHS: is there one value vector v with
    v[room] - p[room] >= v[k] - p[k] for every answer and room k? (feasibility LP)"""
    rows, rhs = [], []
    for prices, room in answers:
        for k in range(ROOMS):
            if k != room:  # v[k] - v[room] <= p[k] - p[room]
                row = np.zeros(ROOMS)
                row[k], row[room] = 1.0, -1.0
                rows.append(row)
                rhs.append(float(prices[k] - prices[room]))
    result = linprog(
        np.zeros(ROOMS),
        A_ub=np.array(rows),
        b_ub=np.array(rhs),
        bounds=[(None, None)] * ROOMS,
        method="highs",
    )
    return bool(result.status == 0)


prices_st = st.tuples(*[st.integers(0, 60) for _ in range(ROOMS)])


@settings(max_examples=80, deadline=None)
@given(
    first=st.lists(st.tuples(prices_st, st.integers(0, ROOMS - 1)), min_size=1, max_size=4),
    second=st.lists(st.tuples(prices_st, st.integers(0, ROOMS - 1)), min_size=1, max_size=4),
)
def test_twins_are_exactly_the_pairs_one_taste_explains(
    first: list[tuple[tuple[int, ...], int]], second: list[tuple[tuple[int, ...], int]]
) -> None:
    sets = [ValueSet(ROOMS), ValueSet(ROOMS)]
    for vs, said in zip(sets, (first, second), strict=True):
        for prices, room in said:
            vs.add(prices, room, range(ROOMS))
    if not (sets[0].consistent() and sets[1].consistent()):
        return
    found = twin_pairs(sets, (0, 1, 2)[:2])
    assert (found == [(0, 1)]) == _one_taste_explains(first + second)


def test_probes_cut_the_twins_interval_in_thirds_and_split_them_when_between() -> None:
    # twins who said: at equal prices room 0 over room 1; at room 0 dearer by 900, room 1
    # so 0 <= v0 - v1 <= 900 for both; probes at 300 and 600
    sets = [ValueSet(2), ValueSet(2)]
    for vs in sets:
        vs.add((500, 500), 0, (0, 1))
        vs.add((1450, 550), 1, (0, 1))
    base = (500, 500)
    asks = [base, base]
    assert probe_asks(base, asks, sets, (0, 1), wide=200, floor=0)
    assert [a[0] - a[1] for a in asks] == [300, 600]
    assert all(sum(a) == sum(base) for a in asks)
    twin = QuasiLinear((1450.0, 1000.0))  # v0 - v1 = 450, between the probes
    assert twin.choose(asks[0], (0, 1), 0) == 0 and twin.choose(asks[1], (0, 1), 0) == 1
    # within a near-tie's reach already: no probes
    untouched = [base, base]
    assert not probe_asks(base, untouched, sets, (0, 1), wide=1000, floor=0)
    assert untouched == [base, base]


def _independent_second_level(values: np.ndarray, plan: tuple[int, ...], held: set[int]) -> float:
    """Max over prices (sum 3000, each >= 1) of the smallest margin of the rows not ``held``,
    the held rows kept at margin >= 0: one LP, built here independently with scipy."""
    rooms = values.shape[1]
    rows, rhs, index = [], [], 0
    for i, own in enumerate(plan):
        for k in range(rooms):
            if k == own:
                continue
            row = np.zeros(rooms + 1)
            row[own], row[k] = 1.0, -1.0
            if index not in held:
                row[rooms] = 1.0
            rows.append(row)
            rhs.append(float(values[i, own] - values[i, k]))
            index += 1
    cost = np.zeros(rooms + 1)
    cost[rooms] = -1.0
    eq = np.ones((1, rooms + 1))
    eq[0, rooms] = 0.0
    res = linprog(
        cost,
        A_ub=np.array(rows),
        b_ub=np.array(rhs),
        A_eq=eq,
        b_eq=[3000.0],
        bounds=[(1, None)] * rooms + [(None, 3000.0)],
        method="highs",
    )
    return float(res.x[rooms])


def _margins(values: np.ndarray, plan: tuple[int, ...], prices: tuple[float, ...]) -> list[float]:
    return [
        (values[i, own] - prices[own]) - (values[i, k] - prices[k])
        for i, own in enumerate(plan)
        for k in range(values.shape[1])
        if k != own
    ]


def test_the_second_stage_widens_everyone_else_s_margin_when_twins_hold_it_at_zero() -> None:
    # members 0 and 1 have the same estimates: rooms 0 and 1 can have margin 0 at best;
    # member 2 (room 2) could have a wide margin, which a vertex of the first stage need not give
    values = np.array([[1400.0, 1000.0, 600.0], [1400.0, 1000.0, 600.0], [500.0, 500.0, 2000.0]])
    plan = (0, 1, 2)
    held = {0, 2}  # rows (member 0, room 1) and (member 1, room 0): margins sum to 0
    reference = _independent_second_level(values, plan, held)
    lp = largest_margin_prices(values, 3000, 0, plan, second_stage=True)
    assert abs(lp.margin) < 1e-6
    margins = _margins(values, plan, lp.prices)
    free = [m for r, m in enumerate(margins) if r not in held]
    assert min(margins) >= -1e-6
    assert abs(min(free) - reference) < 1e-6
    assert reference > 100  # the example is not degenerate


def test_a_probe_round_never_certifies() -> None:
    """Twins split by probes have not chosen at the proposed prices: even when everyone takes
    their planned room in a probe round, no proposal may rest on it (its envy bound, from
    the prices each member saw, exceeds the tolerance)."""
    problem = Problem(
        rent=300_000,
        rooms=tuple(f"r{i}" for i in range(4)),
        members=tuple(f"m{i}" for i in range(4)),
        tolerance=100,
    )
    probe_rounds = 0
    for seed in range(6):
        tenants = tie_tenants(problem, seed)
        search = start(problem)
        while search.proposal() is None and search.walk is None:
            plan = search.plans[-1]
            asked = [Choice(m, 0, a) for m, a in zip(problem.members, plan.asks, strict=True)]
            probe = envy_bound(asked, plan.base) > problem.tolerance
            for question in search.open_questions():
                if probe and plan.assignment is not None:  # everyone takes the planned room
                    room = plan.assignment[problem.members.index(question.member)]
                else:
                    room = tenants[question.member].choose(question.prices, question.choices, 0)
                search.answer(question.id, room)
            if probe:
                probe_rounds += 1
                assert search.proposal() is None, "a probe round was certified"
        proposal = search.proposal()
        if proposal is None:  # handed over to the walk: its own checks apply
            continue
        evidence = [Choice(e.member, e.room, e.prices) for e in proposal.evidence]
        assert envy_bound(evidence, proposal.prices) <= problem.tolerance
    assert probe_rounds > 0
