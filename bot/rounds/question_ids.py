"""Stored question ids: the search's own id, made unique over a round's whole life.

The search names its questions itself (``r3-2``: round 3, member 2; ``q17``: the walk's 17th
label). After a correction the search is rebuilt and may name a *different* question with an
id it used before (round 3 is asked again at other prices). Buttons carry tokens made from
the stored id, so a stored id must never mean two questions: the first question with a
search id is stored under that id, a later, different one under ``<id>~<n>``. Without
corrections every stored id equals the search's id.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import replace

from bot.rounds.records import QuestionRecord
from solver import Question

SEPARATOR = "~"


def search_id(stored_qid: str) -> str:
    """The id the search knows a stored question by."""
    return stored_qid.split(SEPARATOR, 1)[0]


def same_question(stored: QuestionRecord, question: Question) -> bool:
    """The stored row asks exactly what the search asks: same id, member and prices."""
    return (
        search_id(stored.qid) == question.id
        and str(stored.user_id) == question.member
        and stored.prices == question.prices
    )


def stored_open(stored: Sequence[QuestionRecord], question: Question) -> QuestionRecord | None:
    """The open stored row of a search question, if it was asked already."""
    return next((s for s in stored if s.open and same_question(s, question)), None)


def fresh_id(stored: Sequence[QuestionRecord], question_id: str) -> str:
    """An id no stored row has: the search's id, or it with the first free suffix."""
    taken = {s.qid for s in stored}
    if question_id not in taken:
        return question_id
    n = 1
    while f"{question_id}{SEPARATOR}{n}" in taken:
        n += 1
    return f"{question_id}{SEPARATOR}{n}"


def as_stored(question: Question, stored_qid: str) -> Question:
    """The search's question under its stored id (what buttons and message refs use)."""
    return replace(question, id=stored_qid)
