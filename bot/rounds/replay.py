"""Rebuilding a search with one answer changed: the solver is deterministic, so replay it.

A search is a pure function of its inputs and the ordered things people told it (answers,
closed rounds, objections). To take a correction as a new fact, the search is rebuilt from
the state just before the corrected answer, given the new room instead, and then offered
every later event: an answer is replayed only if the rebuilt search asks *exactly* that
question (same id, member and prices), a closed round only in the same round, an objection
only against the same split. A later answer whose question is gone still says something true
("at these prices this member took this room"): the parallel search takes it as a *fact*
(:func:`solver.add_facts`, once, after the replay) and plans from it, so nothing is lost. The
walk's answers are labels on its grid, so there (and in the rare case the rebuilt parallel
search has handed over to the walk, or already holds an answer at those prices) the answer is
dropped and reported, so the bot can set it aside and ask anew. The original is replayed
beside it, step by step, both to know what each later question was and to check that
replaying reproduces the stored search exactly; if it does not, the correction is refused
rather than guessed. A fact kept by an earlier change can itself be changed
(:func:`find_answer`).

Only the solver's public API is used: ``resume``/``to_json``, ``answer``, ``close_round``,
``dispute``, ``add_facts``, ``open_questions``, ``proposal`` and the searches' logs.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field, replace
from typing import Any

from bot.rounds.searches import AnySearch
from solver import (
    Fact,
    InvalidAnswer,
    InvalidState,
    ParallelSearch,
    Proposal,
    Question,
    Walk,
    add_facts,
    resume,
)

Event = tuple[Any, ...]
FACTS = "facts"


class CannotReplay(Exception):
    """Replaying the stored answers did not reproduce the stored search (a bug or old data)."""


@dataclass(frozen=True, slots=True)
class Given:
    """A later answer as given: the search's question id, who, at which prices, which room."""

    question_id: str
    member: str
    prices: tuple[int, ...]
    room: int

    def as_fact(self) -> Fact:
        return (self.question_id, self.member, self.prices, self.room)


@dataclass(frozen=True, slots=True)
class Where:
    """An answer in :func:`events_of`: an answer event, or entry ``fact`` of a facts event."""

    index: int
    fact: int | None = None


@dataclass
class Replayed:
    """The rebuilt search and what it no longer holds."""

    search: AnySearch
    #: later answers whose question is gone and that the search could not keep (asked anew
    #: if still needed): always so with the walk
    dropped_answers: list[Given] = field(default_factory=list)
    #: later answers whose question is gone, kept by the parallel search as facts
    kept_answers: list[Given] = field(default_factory=list)
    #: objections made against a split the rebuilt search no longer reaches: (member, room)
    dropped_objections: list[tuple[str, int]] = field(default_factory=list)


def events_of(search: AnySearch) -> list[Event]:
    """What people told the search, in order: answers, closed rounds, objections."""
    if isinstance(search, ParallelSearch):
        return [tuple(e) for e in search.log]
    return [
        ("answer", f"q{r.seq}", r.room) if r.source == "asked" else ("dispute", r.member, r.room)
        for r in search.records
        if r.source in ("asked", "objection")
    ]


def kept_facts(search: AnySearch) -> list[Given]:
    """The answers the search holds as facts (kept by changes), in the order given."""
    if not isinstance(search, ParallelSearch):
        return []
    return [given for event in search.log if event[0] == FACTS for given in _facts(event)]


def answer_index(search: AnySearch, question_id: str) -> int | None:
    """Where the answer to ``question_id`` is in :func:`events_of`, if the search holds it."""
    for index, event in enumerate(events_of(search)):
        if event[0] == "answer" and event[1] == question_id:
            return index
    return None


def find_answer(
    search: AnySearch, question_id: str, member: str, prices: tuple[int, ...]
) -> Where | None:
    """Where the answer of ``member`` to ``question_id`` at ``prices`` is, if the search
    holds it: a kept fact (matched on all three, since a rebuilt search may reuse the id for
    another question) or else the answer event with that id (ids of answer events are unique
    in one log; :func:`rebuild` checks the prices)."""
    events = events_of(search)
    for index, event in enumerate(events):
        if event[0] == FACTS:
            for entry, fact in enumerate(_facts(event)):
                if fact == Given(question_id, member, prices, fact.room):
                    return Where(index, entry)
    answered = answer_index(search, question_id)
    return Where(answered) if answered is not None else None


def rebuild(
    search: AnySearch, where: Where | int, room: int, *, prices: tuple[int, ...] | None = None
) -> Replayed:
    """``search`` with the answer at ``where`` in ``events_of(search)`` given as ``room``
    instead (``prices``: refuse unless that answer was given at these prices)."""
    events = events_of(search)
    at = where if isinstance(where, Where) else Where(where)
    index = at.index
    if not 0 <= index < len(events) or events[index][0] != ("answer" if at.fact is None else FACTS):
        raise CannotReplay(f"event {index} is not an answer")
    old = _fresh(search)
    for event in events[:index]:
        _apply(old, event)
    new = resume(old.to_json())  # the plans made so far and nothing later
    if at.fact is None:
        if prices is not None and _asked(old, str(events[index][1])).prices != prices:
            raise CannotReplay("the search asked that question at other prices")
        _apply(new, ("answer", events[index][1], room))
    else:
        facts = _facts(events[index])
        if not 0 <= at.fact < len(facts):
            raise CannotReplay(f"event {index} has no fact {at.fact}")
        facts[at.fact] = replace(facts[at.fact], room=room)
        _apply(new, (FACTS, [list(f.as_fact()) for f in facts]))
    _apply(old, events[index])
    result = Replayed(new)
    later: list[Given] = []
    for event in events[index + 1 :]:
        _offer(old, new, event, result, later)
    _keep(new, later, result)
    if old.to_json() != search.to_json():
        raise CannotReplay("replaying the stored answers did not give the stored search")
    return result


def _keep(new: AnySearch, later: list[Given], result: Replayed) -> None:
    """Give the parallel search the later answers it no longer asks for, as facts."""
    if not isinstance(new, ParallelSearch) or new.walk is not None:
        result.dropped_answers.extend(later)
        return
    known = {(r.member, r.prices) for r in new.all_records()}
    for given in later:
        target = (
            result.dropped_answers if (given.member, given.prices) in known else result.kept_answers
        )
        target.append(given)
        known.add((given.member, given.prices))
    try:
        add_facts(new, [g.as_fact() for g in result.kept_answers])
    except InvalidAnswer as exc:
        raise CannotReplay(str(exc)) from exc


def _asked(search: AnySearch, question_id: str) -> Question:
    found = next((q for q in search.open_questions() if q.id == question_id), None)
    if found is None:
        raise CannotReplay(f"question {question_id!r} is not open where its answer was given")
    return found


def _facts(event: Event) -> list[Given]:
    return [Given(str(q), str(m), tuple(int(p) for p in ps), int(r)) for q, m, ps, r in event[1]]


def _offer(
    old: AnySearch, new: AnySearch, event: Event, result: Replayed, later: list[Given]
) -> None:
    """Apply ``event`` to the original; to the rebuilt search only if it still fits (answers
    that do not fit go to ``later``; so do facts, which all go in once, after the replay)."""
    kind = event[0]
    if kind == "answer":
        asked = _asked(old, str(event[1]))
        _apply(old, event)
        now = next((q for q in new.open_questions() if q.id == event[1]), None)
        if now is not None and (now.member, now.prices) == (asked.member, asked.prices):
            _apply(new, event)
        else:
            later.append(Given(str(event[1]), asked.member, asked.prices, int(event[2])))
    elif kind == FACTS:
        _apply(old, event)
        later.extend(_facts(event))
    elif kind == "close":
        same_round = _round(old) == _round(new)
        _apply(old, event)
        try:
            if not same_round:
                raise InvalidState("another round")
            _apply(new, event)
        except InvalidState:
            pass
    else:
        objected = old.proposal()
        _apply(old, event)
        current = new.proposal()
        if objected is not None and current is not None and same_split(objected, current):
            _apply(new, event)
        else:
            result.dropped_objections.append((str(event[1]), int(event[2])))


def same_split(a: Proposal, b: Proposal) -> bool:
    """The same rooms for the same people at the same prices."""
    return dict(a.assignment) == dict(b.assignment) and tuple(a.prices) == tuple(b.prices)


def _round(search: AnySearch) -> int:
    return search.round_number if isinstance(search, ParallelSearch) else 0


def _apply(search: AnySearch, event: Event) -> None:
    kind = event[0]
    try:
        if kind == "answer":
            search.answer(str(event[1]), int(event[2]))
        elif kind == "close":
            assert isinstance(search, ParallelSearch)
            search.close_round()
        elif kind == FACTS:
            assert isinstance(search, ParallelSearch)
            add_facts(search, [f.as_fact() for f in _facts(event)])
        else:
            search.dispute(str(event[1]), int(event[2]))
    except InvalidAnswer as exc:
        raise CannotReplay(str(exc)) from exc


def _fresh(search: AnySearch) -> AnySearch:
    """The search as it began: the same inputs, nothing told yet."""
    data = json.loads(search.to_json())
    if isinstance(search, ParallelSearch):
        data["log"] = []
        return resume(json.dumps(data, separators=(",", ":")))
    if not isinstance(search, Walk):  # a re-priced split: nobody answered questions for it
        raise CannotReplay("this split re-prices an earlier agreement; it has no answers to change")
    earlier: dict[str, list[tuple[tuple[int, ...], int]]] = {}
    for r in search.records:
        if r.source == "earlier":
            earlier.setdefault(r.member, []).append((r.prices, r.room))
    return _walk_start(search, earlier)


def _walk_start(search: Walk, earlier: dict[str, list[tuple[tuple[int, ...], int]]]) -> Walk:
    """The walk as the bot starts it (no start prices: rough values steer only the rounds)."""
    return Walk.start(search.problem, options=search.options, earlier=earlier)
