"""Facts: answers given at other prices than the search's own questions (kept after a change).

The truth a fact carries is the member's own answer, so what we check it against is the
definition of quasi-linear choice (value minus price, the model the learning assumes): a
tenant who chooses by their true values must stay inside the learned polytope whatever facts
are added, and the search must still end in an exact certificate ("each chose this room at
exactly these prices"), which is envy-free by that definition.
"""

from __future__ import annotations

import json
import random

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from solver import Fact, InvalidAnswer, ParallelSearch, Problem, add_facts, exact_certificate
from solver.simulate import QuasiLinear, Tenant, random_tenants

ROOMS = ("Attic", "Garden room", "Bay window", "Cellar", "Loft")


def _prices(rng: random.Random, n: int, rent: int) -> tuple[int, ...]:
    cuts = sorted(rng.randrange(rent + 1) for _ in range(n - 1))
    return tuple(b - a for a, b in zip([0, *cuts], [*cuts, rent], strict=True))


def _facts(
    search: ParallelSearch, tenants: dict[str, Tenant], rng: random.Random, count: int
) -> list[Fact]:
    """``count`` true answers at random price lists the search has not asked."""
    problem, facts = search.problem, []
    known = {(r.member, r.prices) for r in search.all_records()}
    for k in range(count):
        member = rng.choice(problem.members)
        prices = _prices(rng, problem.size, problem.rent)
        if (member, prices) in known:
            continue
        known.add((member, prices))
        choices = tuple(j for j in range(problem.size) if prices[j] == 0) or tuple(
            range(problem.size)
        )
        facts.append((f"x{k}", member, prices, tenants[member].choose(prices, choices, 0)))
    return facts


def _answer_all(search: ParallelSearch, tenants: dict[str, Tenant], limit: int = 400) -> None:
    for _ in range(limit):
        if search.proposal() is not None:
            return
        question = search.open_questions()[0]
        room = tenants[question.member].choose(question.prices, question.choices, 0)
        search.answer(question.id, room)
        search.check()
    raise AssertionError("no proposal")


@settings(max_examples=30, deadline=None)
@given(
    rooms=st.integers(2, 5),
    seed=st.integers(0, 10**6),
    answered=st.integers(0, 12),
    count=st.integers(1, 12),
)
def test_a_quasi_linear_tenants_values_stay_inside_after_facts(
    rooms: int, seed: int, answered: int, count: int
) -> None:
    problem = Problem(300_000, ROOMS[:rooms], tuple(str(i + 1) for i in range(rooms)))
    rng = random.Random(seed)
    tenants = random_tenants(problem, "quasi-linear", seed)
    search = ParallelSearch.start(problem)
    for _ in range(answered):
        if search.proposal() is not None:
            break
        question = search.open_questions()[0]
        search.answer(
            question.id, tenants[question.member].choose(question.prices, question.choices, 0)
        )
    facts = _facts(search, tenants, rng, count)
    add_facts(search, facts)
    search.check()
    for i, member in enumerate(problem.members):
        tenant = tenants[member]
        assert isinstance(tenant, QuasiLinear)
        assert search._values[i].contains(tenant.values)
    for _, member, prices, room in facts:  # every fact is a cut of that member's values
        limit = search._values[problem.members.index(member)].limit
        for k in range(problem.size):
            if k != room and (min(prices) > 0 or prices[k] == 0):
                assert limit[room, k] <= prices[k] - prices[room]
    saved = search.to_json()
    assert ParallelSearch.from_json(saved).to_json() == saved
    assert ParallelSearch.replay(saved).to_json() == saved
    if search.walk is None:
        _answer_all(search, tenants)
        proposal = search.proposal()
        assert proposal is not None
        # envy-freeness by definition: nobody's true value minus price is higher elsewhere
        for member, room in proposal.assignment.items():
            assert tenants[member].envy(proposal.prices, room) <= proposal.envy_bound
        if exact_certificate(proposal):  # every choice at exactly these prices
            assert proposal.envy_bound == 0
        assert proposal.envy_bound <= problem.tolerance  # else a near-tie round's bound
        assert all(e.source != "earlier" for e in proposal.evidence), "facts are no evidence"


def test_facts_are_one_event_and_replan_a_round_nobody_answered() -> None:
    problem = Problem(300_000, ROOMS[:3], ("1", "2", "3"))
    tenants = random_tenants(problem, "quasi-linear", 4)
    search = ParallelSearch.start(problem)
    before = search.round_number
    asked = search.open_questions()
    facts = _facts(search, tenants, random.Random(4), 3)
    add_facts(search, facts)
    data = json.loads(search.to_json())
    assert data["log"] == [["facts", [[q, m, list(p), r] for q, m, p, r in facts]]]
    assert search.round_number == before + 1, "the unanswered round is planned again"
    assert {q.id for q in search.open_questions()}.isdisjoint({q.id for q in asked})
    assert [r.source for r in search.records] == ["earlier"] * 3
    # once somebody answered, the round stands and the facts count from the next round on
    question = search.open_questions()[0]
    search.answer(
        question.id, tenants[question.member].choose(question.prices, question.choices, 0)
    )
    now = search.round_number
    add_facts(search, _facts(search, tenants, random.Random(5), 2))
    assert search.round_number == now and len(search.open_questions()) == 2
    search.check()


def test_a_bad_fact_changes_nothing() -> None:
    problem = Problem(300_000, ROOMS[:3], ("1", "2", "3"))
    search = ParallelSearch.start(problem)
    question = search.open_questions()[0]
    search.answer(question.id, 0)
    saved = search.to_json()
    bad: list[list[Fact]] = [
        [("x", "9", (100_000, 100_000, 100_000), 0)],  # not a member
        [("x", "1", (100_000, 200_000), 0)],  # wrong room count
        [("x", "1", (0, 150_000, 150_000), 1)],  # a room not offered (only the free one is)
        [("x", "1", question.prices, 1)],  # already answered at these prices
        [("x", "2", (1, 2, 299_997), 0), ("y", "2", (1, 2, 299_997), 1)],  # twice
    ]
    for facts in bad:
        with pytest.raises(InvalidAnswer):
            add_facts(search, facts)
        assert search.to_json() == saved


def test_a_search_saved_before_facts_existed_still_loads() -> None:
    # saved by the parallel search before this change (three answers of round 1, one of round 2)
    old = (
        '{"format":"flatpact-rounds","version":1,"problem":{"rent":90000,"rooms":["A","B","C"],'
        '"members":["1","2","3"],"tolerance":100,"floor":0},"options":{"max_rounds":30},'
        '"rough":null,"earlier":{},"log":[["answer","r1-1",1],["answer","r1-2",0],'
        '["answer","r1-3",0],["answer","r2-1",2]],"plans":[["centre",[30000,30000,30000],'
        "[[30000,30000,30000],[30000,30000,30000],[30000,30000,30000]],[0,1,2]],"
        '["centre",[44718,44718,564],[[44718,44718,564],[44718,44718,564],[44718,44718,564]],'
        "[1,2,0]]]}"
    )
    search = ParallelSearch.from_json(old)
    assert search.to_json() == old
    # replay ignores the stored plans and plans with today's rules, which changed since this
    # was saved (the stored plans are what keeps members' questions unchanged): the log and
    # the first round (the equal split) still agree
    replayed = ParallelSearch.replay(old)
    assert replayed.log == search.log
    assert replayed.plans[0] == search.plans[0]
    assert [q.id for q in replayed.open_questions()] == ["r2-2", "r2-3"]
    assert [q.id for q in search.open_questions()] == ["r2-2", "r2-3"]
