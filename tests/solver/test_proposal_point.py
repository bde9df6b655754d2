"""The proposed point is the best candidate of the final cell by the documented criterion.

``solver/envy.py`` documents the rule: evaluate the barycentre and every vertex of the fully
labelled cell, keep the smallest envy bound (the first candidate on ties). Here the candidates,
their prices and their bounds are recomputed from the finished walk's final cell and the
proposal's evidence by :mod:`tests.solver.final_cell`, which writes the rules out again.
"""

from hypothesis import given, settings
from hypothesis import strategies as st

from solver import Problem, Walk
from solver.simulate import RandomAnswers, Tenant, answer_until_proposal, random_tenants
from tests.solver.final_cell import candidates, check_evidence_sits_on_the_facet


def _problem(rooms: int, members: int, rent: int, floor: int, tolerance: int) -> Problem:
    return Problem(
        rent=rent,
        rooms=[f"r{i}" for i in range(rooms)],
        members=[f"m{i}" for i in range(members)],
        tolerance=tolerance,
        floor=floor,
    )


def _check_best(walk: Walk) -> bool:
    """Assert the proposal is the best candidate; True when the candidates' bounds differ."""
    proposal = walk.proposal()
    assert proposal is not None
    check_evidence_sits_on_the_facet(walk, proposal)
    found = candidates(walk)
    best = min(found, key=lambda c: c.bound)  # min() keeps the first of equal bounds
    assert proposal.envy_bound == best.bound
    assert proposal.prices == best.prices
    return len({c.bound for c in found}) > 1


@st.composite
def _problems(draw: st.DrawFn) -> Problem:
    members = draw(st.integers(2, 5))
    empty = draw(st.sampled_from([0, 0, 0, 1, 2]))
    floor = draw(st.sampled_from([0, 0, -5_000, 1_000]))
    rent = draw(st.integers(20_000, 600_000))
    # empty rooms make fine tolerances slow (measured: 5 rooms, 3 members, rent 300000,
    # tolerance 100, seeds 0-7 took 51 s on this machine, with the loop of the test below),
    # so they get a tolerance of half a percent of the rent
    tolerance = draw(st.sampled_from([100, 250, 1_000])) if not empty else rent // 200
    return _problem(members + empty, members, rent, floor, tolerance)


@settings(max_examples=40, deadline=None)
@given(problem=_problems(), seed=st.integers(0, 10**6), model=st.sampled_from(["ql", "any"]))
def test_proposal_is_the_best_candidate(problem: Problem, seed: int, model: str) -> None:
    tenants: dict[str, Tenant]
    if model == "ql":
        tenants = dict(random_tenants(problem, "quasi-linear", seed))
    else:  # answers that follow no taste at all still get the best point of their cell
        tenants = {m: RandomAnswers(seed, m) for m in problem.members}
    walk = Walk.start(problem)
    answer_until_proposal(walk, tenants)
    _check_best(walk)


def test_the_choice_matters_on_fixed_seeds() -> None:
    # The check above can only catch a wrong choice where the candidates' bounds differ:
    # on these fixed seeds they do in most runs (with and without empty rooms).
    differing = runs = 0
    for rooms, members, tolerance in [(3, 3, 100), (4, 4, 100), (4, 3, 250), (5, 3, 1_000)]:
        problem = _problem(rooms, members, 300_000, 0, tolerance)
        for seed in range(8):
            walk = Walk.start(problem)
            answer_until_proposal(walk, random_tenants(problem, "quasi-linear", seed))
            differing += _check_best(walk)
            runs += 1
    assert differing >= runs // 2, f"candidates differed in only {differing} of {runs} runs"
