"""Answers given at other prices than the search's own questions, kept as facts.

When a member changes an earlier answer, the round's search is rebuilt and plans other
rounds, so later answers no longer match its questions. Each of them still says something
true: "at exactly these prices, this member took this room". :func:`add_facts` gives such
answers to a parallel search as facts: each is learned as a cut of that member's values, like
the ``earlier`` answers a search starts with (source ``"earlier"``, stage 0), and never
becomes evidence for a certificate (evidence is only an answer to the current round's
question). If the current round has no answer yet, no proposal stands and the answers still
fit money-counts-one-for-one values, the round is planned again from everything known (a new
round number; its old questions are withdrawn), so the next questions already use the facts.

The batch is one event of the search's log, ``["facts", [[question_id, member, prices, room],
...]]``, so
``to_json``/``from_json``/``replay`` reproduce it; logs saved before facts existed hold no
such event and load as before.
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING

from solver.errors import InvalidAnswer, InvalidState
from solver.labelling import floor_rooms

if TYPE_CHECKING:
    from solver.parallel import ParallelSearch

#: One fact: (the id of the question it answered, member, the prices they were shown, the room
#: they took). The id is only the caller's label (a rebuilt search may reuse it for another
#: question); the search learns from member, prices and room.
Fact = tuple[str, str, tuple[int, ...], int]

EVENT = "facts"


def knows(search: ParallelSearch, member: str, prices: Sequence[int]) -> bool:
    """True when the search already holds an answer of ``member`` at exactly ``prices``
    (it keeps one answer per member and price list; a fact there would add nothing or
    contradict it)."""
    return any(r.member == member and r.prices == tuple(prices) for r in search.all_records())


def add_facts(search: ParallelSearch, facts: Sequence[Fact]) -> None:
    """Learn ``facts`` (answers given at other prices), then re-plan an unanswered round.

    All facts are checked first; a bad one raises :class:`InvalidAnswer` and nothing is
    learned. A search that has handed over to the walk takes no facts (:class:`InvalidState`).
    """
    if not facts:
        return
    if search.after is not None:
        raise InvalidState("the search now asks one question at a time; it takes no facts")
    problem, n = search.problem, search.problem.size
    checked: list[tuple[str, str, tuple[int, ...], int, tuple[int, ...]]] = []
    seen: set[tuple[str, tuple[int, ...]]] = set()
    for label, member, prices, room in facts:
        key = (member, tuple(int(p) for p in prices))
        if member not in problem.members:
            raise InvalidAnswer(f"a fact names {member!r}, who is not in this round")
        if len(key[1]) != n or min(key[1]) < problem.floor:
            raise InvalidAnswer(f"a fact of {member!r} has prices that do not fit these rooms")
        choices = floor_rooms([p - problem.floor for p in key[1]]) or tuple(range(n))
        if room not in choices:
            raise InvalidAnswer(f"a fact of {member!r} names room {room}, which was not offered")
        if key in seen or knows(search, *key):
            raise InvalidAnswer(
                f"{member!r} already answered at these prices; the search keeps one answer "
                "per price list"
            )
        seen.add(key)
        checked.append((str(label), member, key[1], int(room), choices))
    search.log.append((EVENT, [[q, m, list(p), r] for q, m, p, r, _ in checked]))
    for _, member, prices, room, choices in checked:
        search._record(member, prices, room, "earlier", choices, stage=0)
    unanswered = search._proposal is None and search._answers_this_round == 0
    if unanswered and all(values.consistent() for values in search._values):
        search._open = {}  # the round is planned again: its questions are withdrawn
        search._next_round()


def apply_event(search: ParallelSearch, facts: Sequence[Sequence[object]]) -> None:
    """Replay a stored ``facts`` event (see :mod:`solver.parallel_saved`)."""
    add_facts(search, [_parse(f) for f in facts])


def _parse(fact: Sequence[object]) -> Fact:
    label, member, prices, room = fact
    if not isinstance(prices, list | tuple) or not isinstance(room, int):
        raise ValueError(f"a stored fact {fact!r} is damaged")
    return str(label), str(member), tuple(int(p) for p in prices), room
