"""Why the walk alone can leave a budget-capped tenant envious, and why rounds do not.

Finding (issue 11: "the walk reaches only 96% within the tolerance for budget-capped tenants
at 6 rooms, envy up to 288.32"): the walk's certificate bounds envy by how much prices moved
between a member's answer and the proposal (:mod:`solver.envy`), which is valid when money
counts one-for-one near those prices. A budget cap breaks that: at the member's vertex the
envied room cost just above their budget, so they could not choose it, and the proposed
prices, a few units away, put it just within the budget. Their envy then jumps by the whole
value difference, whatever the mesh. Every failing run below has exactly this shape.
"""

from solver import ParallelOptions, ParallelSearch, Problem, Walk, exact_certificate
from solver.simulate import BudgetCapped, answer_in_rounds, random_tenants


def _problem() -> Problem:
    return Problem(
        rent=300_000, rooms=[f"r{i}" for i in range(6)], members=[f"m{i}" for i in range(6)]
    )


def test_walk_envy_beyond_the_tolerance_is_always_a_budget_crossing() -> None:
    problem = _problem()
    failures = 0
    for seed in range(32):
        tenants = random_tenants(problem, "budget-capped", seed)
        walk = Walk.start(problem)
        answer_in_rounds(walk, tenants)
        proposal = walk.proposal()
        assert proposal is not None
        for e in proposal.evidence:
            tenant = tenants[e.member]
            assert isinstance(tenant, BudgetCapped)
            if tenant.envy(proposal.prices, e.room) <= problem.tolerance:
                continue
            failures += 1
            own = tenant.values[e.room] - proposal.prices[e.room]
            envied = [
                j
                for j in range(problem.size)
                if proposal.prices[j] <= tenant.budget
                and tenant.values[j] - proposal.prices[j] > own + problem.tolerance
            ]
            # each envied room was out of reach where they answered, within reach now
            assert envied
            assert all(e.prices[j] > tenant.budget for j in envied)
    assert failures >= 1  # seed 31 is the run with envy 288.32 (28832 minor units)


def test_rounds_certify_budget_capped_tenants_at_the_exact_prices() -> None:
    problem = _problem()
    for seed in (7, 31):  # the walk's two failing seeds among the first 32
        tenants = random_tenants(problem, "budget-capped", seed)
        search = ParallelSearch.start(problem)
        answer_in_rounds(search, tenants)
        proposal = search.proposal()
        assert proposal is not None
        assert exact_certificate(proposal)  # measured: both end in an exact certificate
        assert all(tenants[m].envy(proposal.prices, r) == 0 for m, r in proposal.assignment.items())


def test_confirming_the_walks_proposal_catches_the_budget_crossing() -> None:
    # max_rounds=0 hands over at once: the walk runs exactly as alone (same start, no
    # earlier answers), then its proposal is confirmed at exactly its prices
    problem = _problem()
    for seed in (7, 31):
        tenants = random_tenants(problem, "budget-capped", seed)
        alone = Walk.start(problem)
        answer_in_rounds(alone, tenants)
        before = alone.proposal()
        assert before is not None
        assert max(tenants[m].envy(before.prices, r) for m, r in before.assignment.items()) > 100
        search = ParallelSearch.start(problem, options=ParallelOptions(max_rounds=0))
        while search.proposal() is None:
            for q in search.open_questions():
                search.answer(q.id, tenants[q.member].choose(q.prices, q.choices, 0))
                search.check()
        proposal = search.proposal()
        assert proposal is not None
        assert search.walk is not None
        assert exact_certificate(proposal)  # the confirmation rounds caught the crossing
        assert all(tenants[m].envy(proposal.prices, r) == 0 for m, r in proposal.assignment.items())
        resumed = ParallelSearch.from_json(search.to_json())
        assert resumed.proposal() == proposal
        assert resumed.all_records() == search.all_records()
