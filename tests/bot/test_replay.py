"""A changed answer is a new fact: the rebuilt search keeps everything else that is true.

The walk (answers are labels on its grid): a simulated tenant misclicks once, answers a few
more questions, then changes the misclick back to their real choice; after the rebuild,
answering on exactly like a tenant who never misclicked must give the very same search (its
saved JSON, byte for byte) as a fresh search that never saw the misclick.

The parallel search: every answer given stays a fact ("at these prices this member took this
room"), so after the change nothing is set aside: the rebuilt search holds every answer given,
with the corrected room, as a cut of that member's values, and a quasi-linear tenant's true
values stay inside; answering on, it ends in an exact certificate that is envy-free by the
definition (nobody's value minus price is higher for another room). For both methods,
rebuilding with the same room reproduces the stored search exactly.
"""

from __future__ import annotations

from collections.abc import Mapping

import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from bot.rounds.replay import CannotReplay, Replayed, answer_index, events_of, rebuild
from bot.rounds.searches import AnySearch
from solver import ParallelSearch, Problem, Question, Walk, exact_certificate, start
from solver.simulate import QuasiLinear, Tenant, random_tenants

ROOMS = ("Attic", "Garden room", "Bay window", "Cellar")


def _answer(tenants: Mapping[str, Tenant], question: Question) -> int:
    return tenants[question.member].choose(question.prices, question.choices, 0)


def _drive(
    search: AnySearch,
    tenants: Mapping[str, Tenant],
    *,
    misclick_at: int | None = None,
    stop_after: int | None = None,
) -> tuple[Question, int] | None:
    """Answer the first open question until a proposal; maybe misclick once. Returns the
    misclicked question and the wrong room."""
    count = 0
    wrong: tuple[Question, int] | None = None
    while search.proposal() is None and (stop_after is None or count < stop_after):
        question = search.open_questions()[0]
        room = _answer(tenants, question)
        others = [c for c in question.choices if c != room]
        if count == misclick_at and others and wrong is None:
            room = others[0]
            wrong = (question, room)
        search.answer(question.id, room)
        count += 1
    return wrong


def _check_changed(
    search: AnySearch,
    changed: Replayed,
    tenants: Mapping[str, Tenant],
    wrong: tuple[Question, int],
    problem: Problem,
) -> None:
    """What a change must give, by method (see the module docstring)."""
    question, _ = wrong
    meant = _answer(tenants, question)
    if isinstance(search, Walk):
        _drive(changed.search, tenants)
        never = start(problem, method="walk")
        _drive(never, tenants)
        assert changed.search.to_json() == never.to_json()
        return
    rebuilt = changed.search
    assert isinstance(rebuilt, ParallelSearch)
    assert changed.dropped_answers == [], "the parallel method sets no answer aside"
    given = {
        (r.member, r.prices): r.room
        for r in search.all_records()
        if r.source == "asked" and (r.member, r.prices) != (question.member, question.prices)
    }
    held = {(r.member, r.prices): r.room for r in rebuilt.all_records()}
    for (member, prices), room in given.items():
        assert held.get((member, prices)) == room, f"{member}'s answer at {prices} was lost"
    assert held[(question.member, question.prices)] == meant
    for i, member in enumerate(problem.members):
        tenant = tenants[member]
        assert isinstance(tenant, QuasiLinear)
        assert rebuilt._values[i].contains(tenant.values)
    saved = rebuilt.to_json()
    assert ParallelSearch.from_json(saved).to_json() == saved
    assert ParallelSearch.replay(saved).to_json() == saved
    rebuilt.check()
    _drive(rebuilt, tenants)
    proposal = rebuilt.proposal()
    assert proposal is not None
    if exact_certificate(proposal):
        assert proposal.envy_bound == 0
    else:  # a near-tie round's bound, or the walk's after a hand-over
        assert proposal.envy_bound <= problem.tolerance
    for member, room in proposal.assignment.items():  # envy-free by the definition
        assert tenants[member].envy(proposal.prices, room) <= proposal.envy_bound


@pytest.mark.parametrize("method", ["parallel", "walk"])
@pytest.mark.parametrize("seed", range(4))
@pytest.mark.parametrize("misclick_at", [0, 2, 4])
def test_changing_a_misclick_keeps_everything_else_that_is_true(
    method: str, seed: int, misclick_at: int
) -> None:
    problem = Problem(300_000, ROOMS[:3], ("1", "2", "3"))
    tenants = random_tenants(problem, "quasi-linear", seed)
    search = start(problem, method="walk" if method == "walk" else "parallel")
    wrong = _drive(search, tenants, misclick_at=misclick_at, stop_after=misclick_at + 5)
    assert wrong is not None, "every question here offered more than one room"
    question, room = wrong
    index = answer_index(search, question.id)
    assert index is not None and events_of(search)[index] == ("answer", question.id, room)

    unchanged = rebuild(search, index, room)
    assert unchanged.search.to_json() == search.to_json()
    assert unchanged.dropped_answers == [] and unchanged.dropped_objections == []
    assert unchanged.kept_answers == []

    changed = rebuild(search, index, _answer(tenants, question))
    _check_changed(search, changed, tenants, wrong, problem)


def test_changing_the_first_answer_of_three_rounds_loses_nothing() -> None:
    """The parallel search after three rounds of three: the first answer changes. Every
    later answer is kept (as an answer where the question is the same, else as a fact)."""
    problem = Problem(300_000, ROOMS[:3], ("1", "2", "3"))
    tenants = random_tenants(problem, "quasi-linear", 1)
    search = start(problem)
    assert isinstance(search, ParallelSearch)
    wrong = _drive(search, tenants, misclick_at=0, stop_after=9)
    assert wrong is not None and search.round_number >= 3 and search.proposal() is None
    index = answer_index(search, wrong[0].id)
    assert index == 0
    changed = rebuild(search, index, _answer(tenants, wrong[0]))
    assert changed.dropped_answers == []
    assert len(changed.kept_answers) >= 3, "rounds 2 and 3 were planned anew"
    _check_changed(search, changed, tenants, wrong, problem)


@settings(max_examples=40, deadline=None)
@given(
    method=st.sampled_from(["parallel", "walk"]),
    rooms=st.integers(min_value=2, max_value=4),
    seed=st.integers(min_value=0, max_value=10_000),
    misclick_at=st.integers(min_value=0, max_value=8),
    changed_after=st.integers(min_value=0, max_value=6),
)
def test_any_misclick_changed_later_keeps_everything_else_that_is_true(
    method: str, rooms: int, seed: int, misclick_at: int, changed_after: int
) -> None:
    """The same property over room counts, tenants, and when the misclick is noticed."""
    members = tuple(str(i + 1) for i in range(rooms))
    problem = Problem(300_000, ROOMS[:rooms], members)
    tenants = random_tenants(problem, "quasi-linear", seed)
    how = "walk" if method == "walk" else "parallel"
    search = start(problem, method=how)
    wrong = _drive(search, tenants, misclick_at=misclick_at, stop_after=misclick_at + 1)
    assume(wrong is not None and search.proposal() is None)
    assert wrong is not None
    _drive(search, tenants, stop_after=changed_after)
    question, _ = wrong
    index = answer_index(search, question.id)
    assume(index is not None)  # a proposal came first and an objection is not an answer
    assert index is not None
    changed = rebuild(search, index, _answer(tenants, question))
    _check_changed(search, changed, tenants, wrong, problem)


def test_a_search_that_does_not_replay_is_refused_not_guessed() -> None:
    problem = Problem(300_000, ROOMS[:3], ("1", "2", "3"))
    tenants = random_tenants(problem, "quasi-linear", 1)
    search = start(problem)
    _drive(search, tenants, stop_after=4)
    with pytest.raises(CannotReplay):
        rebuild(search, len(events_of(search)) + 3, 0)
