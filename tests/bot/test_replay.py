"""A changed answer is a new fact: the rebuilt search equals a fresh one fed the right answers.

Property, for both methods, over seeds and over which answer was the misclick: a simulated
tenant misclicks once, answers a few more questions, then changes the misclick back to their
real choice; after the rebuild, answering on exactly like a tenant who never misclicked must
give the very same search (its saved JSON, byte for byte) as a fresh search that never saw
the misclick. And rebuilding with the same room reproduces the stored search exactly.
"""

from __future__ import annotations

from collections.abc import Mapping

import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from bot.rounds.replay import CannotReplay, answer_index, events_of, rebuild
from bot.rounds.searches import AnySearch
from solver import Problem, Question, start
from solver.simulate import Tenant, random_tenants

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


@pytest.mark.parametrize("method", ["parallel", "walk"])
@pytest.mark.parametrize("seed", range(4))
@pytest.mark.parametrize("misclick_at", [0, 2, 4])
def test_changing_a_misclick_gives_the_search_that_never_saw_it(
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

    changed = rebuild(search, index, _answer(tenants, question))
    _drive(changed.search, tenants)
    never = start(problem, method="walk" if method == "walk" else "parallel")
    _drive(never, tenants)
    assert changed.search.to_json() == never.to_json()


@settings(max_examples=40, deadline=None)
@given(
    method=st.sampled_from(["parallel", "walk"]),
    rooms=st.integers(min_value=2, max_value=4),
    seed=st.integers(min_value=0, max_value=10_000),
    misclick_at=st.integers(min_value=0, max_value=8),
    changed_after=st.integers(min_value=0, max_value=6),
)
def test_any_misclick_changed_later_gives_the_search_that_never_saw_it(
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
    _drive(changed.search, tenants)
    never = start(problem, method=how)
    _drive(never, tenants)
    assert changed.search.to_json() == never.to_json()


def test_a_search_that_does_not_replay_is_refused_not_guessed() -> None:
    problem = Problem(300_000, ROOMS[:3], ("1", "2", "3"))
    tenants = random_tenants(problem, "quasi-linear", 1)
    search = start(problem)
    _drive(search, tenants, stop_after=4)
    with pytest.raises(CannotReplay):
        rebuild(search, len(events_of(search)) + 3, 0)
