"""True envy, by each simulated tenant's own values, against the tolerance.

The certified bound (``solver/envy.py``) is computed from the answers alone and is a promise
about *quasi-linear* tastes: a member who took room ``r`` at their vertex prices ``P`` envies
room ``j`` at the proposed prices ``q`` by at most ``(P[j] - q[j]) - (P[r] - q[r])``, provided
their answer reflected their values (F. E. Su, "Rental Harmony", Amer. Math. Monthly 106,
1999, on the quasi-linear reading of labels; the inequality is two lines of algebra, repeated
in each check below). For the other tenant models of ``solver/simulate.py`` the method cannot
promise the tolerance, so each test asserts what does follow, and says why:

* quasi-linear: always within the bound, hence within the tolerance;
* budget-capped: within the bound towards every room that was within the member's budget at
  their evidence prices; a room whose price crossed the cap between the answer and the
  proposal is not covered (being in or out of reach is not a one-for-one money trade-off);
* concave in money: within the bound plus ``|P[r] - q[r]| * |P[j] - P[r]| / (wealth - P[r])``,
  because a unit of money is worth more the less is left (derived below);
* any model with a floor that binds: a member the boundary rule sends to a floor-priced room
  against their values (Su's "miserly" assumption: nobody would rather pay for a room than
  take a free one) is not covered; when the floor rules out every division envy-free within
  the tolerance (checked with scipy's HiGHS LP) such a member must exist. The converse does
  not hold: hypothesis found two-room tastes (values (19119, 2614) and (18672, 8672), rent
  10000, floor 0) whose only envy-free prices put room 1 at the floor, and the walk, bound by
  the rule there, proposes a division where one member envies by 6583.
"""

import math

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import linprog

from solver import Problem, Walk
from solver.protocol import Evidence, Proposal
from solver.simulate import (
    BudgetCapped,
    ConcaveInMoney,
    QuasiLinear,
    Tenant,
    answer_until_proposal,
    random_tenants,
)

EPS = 1e-6


def _problem(n: int, rent: int, floor: int, tolerance: int) -> Problem:
    return Problem(
        rent=rent,
        rooms=[f"r{i}" for i in range(n)],
        members=[f"m{i}" for i in range(n)],
        tolerance=tolerance,
        floor=floor,
    )


problems = st.builds(
    _problem,
    n=st.integers(2, 5),
    rent=st.integers(100_000, 600_000),
    floor=st.sampled_from([0, -20_000, 5_000]),
    tolerance=st.sampled_from([100, 500]),
)


def _proposal(problem: Problem, tenants: dict[str, Tenant]) -> Proposal:
    walk = Walk.start(problem)
    answer_until_proposal(walk, tenants)
    proposal = walk.proposal()
    assert proposal is not None and proposal.envy_bound <= problem.tolerance
    return proposal


def _drift(e: Evidence, q: tuple[int, ...], j: int) -> int:
    """How much cheaper room ``j`` got relative to the member's room since they answered."""
    return (e.prices[j] - q[j]) - (e.prices[e.room] - q[e.room])


# ------------------------------------------------------------------------- quasi-linear


def _quasi_linear_backed(tenant: QuasiLinear, e: Evidence) -> bool:
    """The answer reflects the values: at ``P`` no room was better than the one taken."""
    own = tenant.values[e.room] - e.prices[e.room]
    return all(own >= tenant.values[j] - p - EPS for j, p in enumerate(e.prices))


@settings(max_examples=30, deadline=None)
@given(problem=problems, seed=st.integers(0, 10**6))
def test_quasi_linear_tenants_are_always_within_the_tolerance(problem: Problem, seed: int) -> None:
    tenants = dict(random_tenants(problem, "quasi-linear", seed))
    proposal = _proposal(problem, tenants)
    q = proposal.prices
    for e in proposal.evidence:
        tenant = tenants[e.member]
        assert isinstance(tenant, QuasiLinear)
        # plausible tastes never clash with the boundary rule at the final cell
        assert _quasi_linear_backed(tenant, e)
        for j in range(problem.size):
            # v[j]-q[j] - (v[r]-q[r]) = (v[j]-P[j]) - (v[r]-P[r]) + drift <= drift
            envy_j = (tenant.values[j] - q[j]) - (tenant.values[e.room] - q[e.room])
            assert envy_j <= _drift(e, q, j) + EPS
        assert tenant.envy(q, e.room) <= proposal.envy_bound + EPS <= problem.tolerance + EPS


# ------------------------------------------------------------------------- budget-capped


@settings(max_examples=30, deadline=None)
@given(problem=problems, seed=st.integers(0, 10**6))
def test_budget_capped_tenants_within_the_bound_where_it_applies(
    problem: Problem, seed: int
) -> None:
    tenants = dict(random_tenants(problem, "budget-capped", seed))
    proposal = _proposal(problem, tenants)
    q = proposal.prices
    covered = 0
    for e in proposal.evidence:
        tenant = tenants[e.member]
        assert isinstance(tenant, BudgetCapped)
        reach = [j for j, p in enumerate(e.prices) if p <= tenant.budget]
        own = tenant.values[e.room] - e.prices[e.room]
        backed = e.room in reach and all(own >= tenant.values[j] - e.prices[j] - EPS for j in reach)
        if not backed:  # the boundary rule chose for them (a floor room); nothing promised
            continue
        for j in reach:  # rooms within budget when they answered: the quasi-linear argument
            envy_j = (tenant.values[j] - q[j]) - (tenant.values[e.room] - q[e.room])
            assert envy_j <= _drift(e, q, j) + EPS <= proposal.envy_bound + EPS
        crossed = [j for j in range(problem.size) if q[j] <= tenant.budget < e.prices[j]]
        if not crossed:  # nothing came into reach: the tenant's own envy is covered
            assert tenant.envy(q, e.room) <= proposal.envy_bound + EPS
            assert tenant.envy(q, e.room) <= problem.tolerance + EPS
            covered += 1
    assert covered > 0  # the check above was not vacuous (measured: it covers every member
    # in 210 of 210 members over n=2..5, three floors, seeds 0-4)


# ------------------------------------------------------------------------- concave


def _concave_backed(tenant: ConcaveInMoney, e: Evidence) -> bool:
    own = tenant.utility(e.room, e.prices[e.room])
    return all(own >= tenant.utility(j, p) - EPS for j, p in enumerate(e.prices))


@settings(max_examples=30, deadline=None)
@given(problem=problems, seed=st.integers(0, 10**6))
def test_concave_tenants_within_the_bound_plus_the_money_term(problem: Problem, seed: int) -> None:
    # Derivation. Utility v[j] + k*log(w - p). Having taken r at P:
    #   v[r] - v[j] >= k*log((w - P[j]) / (w - P[r])).
    # The money-metric envy e towards j at q solves v[j] + k*log(w - q[j] - e) = v[r] +
    # k*log(w - q[r]), so w - q[j] - e >= (w - P[j]) * (w - q[r]) / (w - P[r]), i.e.
    #   e <= (P[j] - q[j]) - d * (w - P[j]) / (w - P[r])        with d = P[r] - q[r]
    #     =  drift + d * (P[j] - P[r]) / (w - P[r]).
    # The extra term is what concavity costs: money is not one-for-one across price levels.
    tenants = dict(random_tenants(problem, "concave", seed))
    proposal = _proposal(problem, tenants)
    q = proposal.prices
    for e in proposal.evidence:
        tenant = tenants[e.member]
        assert isinstance(tenant, ConcaveInMoney)
        assert _concave_backed(tenant, e)
        w, r = tenant.wealth, e.room
        d = e.prices[r] - q[r]
        worst_extra = 0.0
        for j in range(problem.size):
            exact_limit = (w - q[j]) - (w - e.prices[j]) * (w - q[r]) / (w - e.prices[r])
            extra = d * (e.prices[j] - e.prices[r]) / (w - e.prices[r])
            assert math.isclose(exact_limit, _drift(e, q, j) + extra, abs_tol=1e-4)
            worst_extra = max(
                worst_extra, abs(d) * abs(e.prices[j] - e.prices[r]) / (w - e.prices[r])
            )
        assert tenant.envy(q, r) <= proposal.envy_bound + worst_extra + EPS
        assert tenant.envy(q, r) <= problem.tolerance + worst_extra + EPS


# ------------------------------------------------------------------------- binding floors


def _envy_free_within(values: list[list[float]], rent: int, floor: int, slack: float) -> bool:
    """Is there any assignment and prices >= floor, summing to the rent, with envy <= slack?

    Checked per assignment with scipy's HiGHS LP (feasibility of the envy-free constraints of
    Gal, Mash, Procaccia & Zick, J. ACM 64(6), 2017, relaxed by ``slack``); two rooms only.
    """
    for assignment in [(0, 1), (1, 0)]:
        rows, rhs = [], []
        for i, own in enumerate(assignment):
            other = 1 - own  # p[own] - p[other] <= v[i][own] - v[i][other] + slack
            row = np.zeros(2)
            row[own], row[other] = 1.0, -1.0
            rows.append(row)
            rhs.append(values[i][own] - values[i][other] + slack)
        result = linprog(
            np.zeros(2),
            A_ub=np.array(rows),
            b_ub=np.array(rhs),
            A_eq=np.ones((1, 2)),
            b_eq=[float(rent)],
            bounds=[(floor, None)] * 2,
            method="highs",
        )
        if result.status == 0:
            return True
    return False


def _quasi_linear_tenants(problem: Problem, rows: list[list[float]]) -> dict[str, Tenant]:
    return {m: QuasiLinear(tuple(v)) for m, v in zip(problem.members, rows, strict=True)}


def test_a_binding_floor_can_make_envy_unavoidable() -> None:
    # Both flatmates think room 0 is worth 10000 more than room 1, but a floor of 4000 on a
    # rent of 10000 lets the prices differ by at most 2000: no division is envy-free within
    # the tolerance (the LP says so), the walk still ends with its bound met by the answers,
    # and the member who got room 1 got it from the boundary rule, against their values.
    problem = _problem(2, 10_000, 4_000, 100)
    values = [[10_000.0, 0.0], [10_000.0, 0.0]]
    assert not _envy_free_within(values, problem.rent, problem.floor, problem.tolerance)
    tenants = _quasi_linear_tenants(problem, values)
    proposal = _proposal(problem, tenants)
    envy = {m: tenants[m].envy(proposal.prices, r) for m, r in proposal.assignment.items()}
    assert max(envy.values()) > problem.tolerance
    for e in proposal.evidence:
        tenant = tenants[e.member]
        assert isinstance(tenant, QuasiLinear)
        if envy[e.member] > proposal.envy_bound:
            assert not _quasi_linear_backed(tenant, e)
            assert e.prices[e.room] == problem.floor


@settings(max_examples=40, deadline=None)
@given(
    values=st.lists(st.integers(0, 20_000), min_size=4, max_size=4),
    floor=st.sampled_from([-3_000, 0, 2_000, 4_000]),
)
def test_two_rooms_any_values_with_floors(values: list[int], floor: int) -> None:
    # The documented weaker statement for floors, on arbitrary two-room tastes: members whose
    # answers reflect their values are within the bound; anyone else was placed in a
    # floor-priced room by the boundary rule; and where the LP finds no division envy-free
    # within the tolerance, someone must have been placed that way (otherwise everyone would
    # be within the bound, which is within the tolerance).
    problem = _problem(2, 10_000, floor, 100)
    rows = [[float(values[0]), float(values[1])], [float(values[2]), float(values[3])]]
    tenants = _quasi_linear_tenants(problem, rows)
    proposal = _proposal(problem, tenants)
    envy = {m: tenants[m].envy(proposal.prices, r) for m, r in proposal.assignment.items()}
    placed_by_rule = 0
    for e in proposal.evidence:
        tenant = tenants[e.member]
        assert isinstance(tenant, QuasiLinear)
        if _quasi_linear_backed(tenant, e):
            assert envy[e.member] <= proposal.envy_bound + EPS
        else:
            assert e.prices[e.room] == problem.floor
            placed_by_rule += 1
    if not _envy_free_within(rows, problem.rent, problem.floor, problem.tolerance):
        assert placed_by_rule > 0
        assert max(envy.values()) > problem.tolerance


def test_a_member_who_would_pay_rather_than_take_a_free_room_is_not_covered() -> None:
    # Found by hypothesis: an envy-free division exists (the LP finds one; its prices put
    # room 1 at the floor), yet at the grid point (10000, 0) the boundary rule gives member
    # m0 the free room although they would rather pay the whole rent for room 0. Su's
    # miserly assumption fails for m0, so the method makes no promise to them.
    problem = _problem(2, 10_000, 0, 100)
    rows = [[19_119.0, 2_614.0], [18_672.0, 8_672.0]]
    assert _envy_free_within(rows, problem.rent, problem.floor, 0)
    tenants = _quasi_linear_tenants(problem, rows)
    proposal = _proposal(problem, tenants)
    for e in proposal.evidence:
        tenant = tenants[e.member]
        assert isinstance(tenant, QuasiLinear)
        if tenant.envy(proposal.prices, e.room) > problem.tolerance:
            assert not _quasi_linear_backed(tenant, e)
            assert e.source == "rule" and e.prices[e.room] == problem.floor
