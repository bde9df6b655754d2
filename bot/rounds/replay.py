"""Rebuilding a search with one answer changed: the solver is deterministic, so replay it.

A search is a pure function of its inputs and the ordered things people told it (answers,
closed rounds, objections). To take a correction as a new fact, the search is rebuilt from
the state just before the corrected answer, given the new room instead, and then offered
every later event: an answer is replayed only if the rebuilt search asks *exactly* that
question (same id, member and prices), a closed round only in the same round, an objection
only against the same split. Whatever no longer fits is dropped and reported, so the bot can
set those answers aside and ask anew. The original is replayed beside it, step by step, both
to know what each later question was and to check that replaying reproduces the stored
search exactly; if it does not, the correction is refused rather than guessed.

Only the solver's public API is used: ``resume``/``to_json``, ``answer``, ``close_round``,
``dispute``, ``open_questions``, ``proposal`` and the searches' logs.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from typing import Any

from bot.rounds.searches import AnySearch
from solver import InvalidAnswer, InvalidState, ParallelSearch, Proposal, Walk, resume

Event = tuple[Any, ...]


class CannotReplay(Exception):
    """Replaying the stored answers did not reproduce the stored search (a bug or old data)."""


@dataclass
class Replayed:
    """The rebuilt search and what it no longer holds."""

    search: AnySearch
    #: search ids of later answers whose question is gone (asked anew if still needed)
    dropped_answers: list[str] = field(default_factory=list)
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


def answer_index(search: AnySearch, question_id: str) -> int | None:
    """Where the answer to ``question_id`` is in :func:`events_of`, if the search holds it."""
    for index, event in enumerate(events_of(search)):
        if event[0] == "answer" and event[1] == question_id:
            return index
    return None


def rebuild(search: AnySearch, index: int, room: int) -> Replayed:
    """``search`` with the answer at ``events_of(search)[index]`` given as ``room`` instead."""
    events = events_of(search)
    if not 0 <= index < len(events) or events[index][0] != "answer":
        raise CannotReplay(f"event {index} is not an answer")
    old = _fresh(search)
    for event in events[:index]:
        _apply(old, event)
    new = resume(old.to_json())  # the plans made so far and nothing later
    _apply(new, ("answer", events[index][1], room))
    _apply(old, events[index])
    result = Replayed(new)
    for event in events[index + 1 :]:
        _offer(old, new, event, result)
    if old.to_json() != search.to_json():
        raise CannotReplay("replaying the stored answers did not give the stored search")
    return result


def _offer(old: AnySearch, new: AnySearch, event: Event, result: Replayed) -> None:
    """Apply ``event`` to the original; to the rebuilt search only if it still fits."""
    kind = event[0]
    if kind == "answer":
        asked = next(q for q in old.open_questions() if q.id == event[1])
        _apply(old, event)
        now = next((q for q in new.open_questions() if q.id == event[1]), None)
        if now is not None and (now.member, now.prices) == (asked.member, asked.prices):
            _apply(new, event)
        else:
            result.dropped_answers.append(str(event[1]))
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
