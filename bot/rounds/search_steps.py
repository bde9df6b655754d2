"""A round's search stored as a snapshot plus the steps applied since, not rewritten whole.

The search is deterministic: the same calls on the same saved state give the same state. So
the store keeps the search's JSON (``rounds.walk``, the *snapshot*) and, after it, the ordered
calls the bot made (``search_steps``, one small row per call): an answer, a closed round, an
objection. Loading resumes the snapshot and applies the steps again. Each answer therefore
writes one row of a few dozen bytes, in the transaction that records the answer, instead of
the whole search (106 KiB late in an 838-answer walk at 10 rooms). Every so often (at least
every :data:`SNAPSHOT_EVERY` steps, and at each new round of questions) the snapshot is
rewritten and the steps it covers are deleted in the same transaction (:func:`snapshot_due`),
so a load never replays more than a bounded number of steps.

Every call that changes a stored search must go through :meth:`Context.step
<bot.rounds.context.Context.step>`; a change made any other way would be lost at the next
load (the restart tests in ``tests/bot/test_search_steps.py`` catch that).
"""

from __future__ import annotations

import asyncio
import json
from collections.abc import Sequence
from dataclasses import dataclass

from bot.rounds.errors import StorageFault
from bot.rounds.records import RoundRecord
from bot.rounds.searches import AnySearch, load
from bot.rounds.store_port import Transaction
from solver import InvalidAnswer, InvalidState, ParallelSearch

#: At most this many steps after a snapshot. Measured on a 2134-answer 10-room walk
#: (``python -m bot.bench.long_round --rooms 10 --seed 3 --snapshot-every N``, answers
#: 1001-2134): N=16 hands SQL 12.9 KiB per answer on average, N=64 4.4 KiB, N=256 2.4 KiB;
#: loading into a fresh engine takes 93, 91 and 328 ms.
SNAPSHOT_EVERY = 64


@dataclass(frozen=True, slots=True)
class Answered:
    """``search.answer(qid, room)``."""

    qid: str
    room: int


@dataclass(frozen=True, slots=True)
class RoundClosed:
    """``search.close_round()`` (parallel rounds only: the admin's /nextround)."""


@dataclass(frozen=True, slots=True)
class Disputed:
    """``search.dispute(member, room)``: an objection to a proposal."""

    member: str
    room: int


SearchStep = Answered | RoundClosed | Disputed


def apply(search: AnySearch, step: SearchStep) -> None:
    """Make the call ``step`` stands for; the solver's own refusals pass through unchanged."""
    if isinstance(step, Answered):
        search.answer(step.qid, step.room)
    elif isinstance(step, Disputed):
        search.dispute(step.member, step.room)
    elif isinstance(search, ParallelSearch):
        search.close_round()
    else:
        raise InvalidState("questions go one at a time in this round; there is no round to close")


def encode(step: SearchStep) -> str:
    """Compact JSON, one short array per step (``["a","q17",3]``)."""
    if isinstance(step, Answered):
        value: list[str | int] = ["a", step.qid, step.room]
    elif isinstance(step, Disputed):
        value = ["d", step.member, step.room]
    else:
        value = ["c"]
    return json.dumps(value, separators=(",", ":"))


def decode(round_id: int, text: str) -> SearchStep:
    """A stored step; anything else is a storage fault naming the round."""
    try:
        value = json.loads(text)
        match value:
            case ["a", str(qid), int(room)]:
                return Answered(qid, room)
            case ["d", str(member), int(room)]:
                return Disputed(member, room)
            case ["c"]:
                return RoundClosed()
    except ValueError:
        pass
    raise StorageFault(f"round {round_id}: stored search step {text[:40]!r} is damaged")


def replay(round_id: int, snapshot: str, steps: Sequence[str]) -> AnySearch:
    """The snapshot resumed, with the stored steps applied again in order."""
    search = load(round_id, snapshot)
    for text in steps:
        try:
            apply(search, decode(round_id, text))
        except (InvalidAnswer, InvalidState) as exc:
            raise StorageFault(f"round {round_id}: stored step {text!r} no longer applies") from exc
    return search


def snapshot_due(
    *, steps: int, step_bytes: int, snapshot_bytes: int, limit: int, new_round: bool
) -> bool:
    """Rewrite the snapshot instead of appending? Once the steps after it would number more
    than ``limit`` (a load replays them all), or outweigh the snapshot itself (a small early
    search is cheaper to store whole), or a new round of questions began: between rounds the
    parallel search learns (linear programmes), which its JSON keeps but a replay would redo
    (measured: a 10-room load took 156 ms replaying rounds, 5 ms from a per-round snapshot)."""
    return new_round or steps > limit or step_bytes > snapshot_bytes


async def stored_search(tx: Transaction, record: RoundRecord) -> AnySearch | None:
    """The round's search as stored (snapshot + steps), or None when it has none (not asking
    yet, or forgotten by the retention policy). Bypasses the engine's cache: for readers
    outside an event (answer reuse, agreements worked out, the demo, tests)."""
    if record.walk_json is None:
        return None
    steps = await tx.search_steps(record.id)
    return await asyncio.to_thread(replay, record.id, record.walk_json, steps)
