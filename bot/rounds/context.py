"""What every handler works with during one event: the transaction, the time, the outbox.

A :class:`Context` lives for exactly one transaction. Searches loaded during it are kept
aside and only handed back to the engine's cache after the commit, so a refused or failed
event never leaves a half-advanced search in memory. A search is stored as a snapshot plus
the steps applied since (:mod:`bot.rounds.search_steps`): :meth:`Context.step` makes a call
on the search and notes it, :meth:`Context.save_search` appends the noted steps (or writes a
new snapshot) in the event's transaction.
"""

from __future__ import annotations

import asyncio
import json
from collections import OrderedDict
from dataclasses import dataclass, field
from typing import Any

from bot.rounds.errors import StorageFault
from bot.rounds.messages import Outgoing
from bot.rounds.records import RoundRecord
from bot.rounds.search_steps import (
    SNAPSHOT_EVERY,
    SearchStep,
    apply,
    encode,
    replay,
    snapshot_due,
)
from bot.rounds.searches import AnySearch, round_of
from bot.rounds.store_port import Transaction
from solver import BrokenInvariant

DAY = 24 * 3600


@dataclass(frozen=True, slots=True)
class EngineConfig:
    """Knobs of the engine; times are seconds. ``token_secret`` keys the button tokens.

    ``look_ahead`` asks idle members ahead of time (:class:`solver.Options`). Off by default:
    in simulated rounds it cuts median waiting rounds by about 35% for four members, but when
    people answer in their own time many guesses are withdrawn before anyone answers them
    (the sandbox demo showed 47% more questions on screen), and questions are what people feel.
    """

    token_secret: bytes
    reminder_after: int = DAY
    hold_up_after: int = 3 * DAY
    lapse_after: int = 14 * DAY
    look_ahead: bool = False
    #: A round that would ask anyone more questions than this stops, with a clear message to
    #: the group, instead of going on without bound (a 10-room walk can take hundreds).
    max_questions_per_member: int = 150
    #: Objections that end (:mod:`bot.rounds.same_split`): after this many objections led
    #: back to a split the group had already seen, or after this many objections in all, the
    #: group gets its last choice (agree to the split, or an admin ends the round).
    fruitless_objections: int = 2
    objection_limit: int = 4
    #: only the group chat's admins may start a round (``/newround``, ``/again``, ``/changeover``)
    only_admins_start: bool = False
    #: retention (:mod:`bot.rounds.retention`): days a finished round's answers are kept,
    #: and days processed event keys and sent messages are kept
    keep_answers_days: int = 60
    keep_log_days: int = 30
    #: the stored search's snapshot is rewritten once more steps than this follow it
    #: (:mod:`bot.rounds.search_steps`)
    snapshot_every: int = SNAPSHOT_EVERY


@dataclass(slots=True)
class HeldSearch:
    """A round's search in memory and what is stored of it: ``rev`` is the ``walk_rev`` the
    stored state has, the step counts say how much follows the snapshot, ``unsaved`` holds
    this event's steps until :meth:`Context.save_search` stores them."""

    rev: int
    search: AnySearch
    steps: int = 0
    step_bytes: int = 0
    snapshot_bytes: int = 0
    unsaved: list[SearchStep] = field(default_factory=list)
    #: never stored: the next save writes a snapshot
    fresh: bool = False
    #: the round of questions when the snapshot was taken (or the search loaded)
    snapshot_round: int | None = None


SearchCache = dict[int, HeldSearch]
#: How many rounds' searches the engine keeps in memory (a 10-room walk is about 0.7 MB);
#: rounds that ended are dropped at once, the least recently used beyond this.
CACHED_SEARCHES = 256


class BoundedSearchCache(OrderedDict[int, HeldSearch]):
    """The engine's search cache: least recently used first, never more than ``limit``."""

    def __init__(self, limit: int = CACHED_SEARCHES) -> None:
        super().__init__()
        self.limit = limit

    def keep(self, fresh: SearchCache, ended: set[int]) -> None:
        """After a commit: remember this event's searches, forget rounds that ended."""
        for round_id, entry in fresh.items():
            self[round_id] = entry
            self.move_to_end(round_id)
        for round_id in ended:
            self.pop(round_id, None)
        while len(self) > self.limit:
            self.popitem(last=False)


@dataclass
class Context:
    """One event's working set; handlers append to ``out`` in the order messages should go."""

    tx: Transaction
    now: int
    config: EngineConfig
    cache: SearchCache | BoundedSearchCache
    out: list[Outgoing] = field(default_factory=list)
    searches: SearchCache = field(default_factory=dict)
    #: rounds that ended in this event (agreed, cancelled, lapsed, stopped at the limit)
    ended: set[int] = field(default_factory=set)

    def send(self, message: Outgoing) -> None:
        self.out.append(message)

    async def audit(self, round_id: int, kind: str, user_id: int | None, **detail: Any) -> None:
        await self.tx.audit(round_id, self.now, kind, user_id, json.dumps(detail, sort_keys=True))

    async def search(self, record: RoundRecord) -> AnySearch:
        """The round's search: from this event, from the engine's cache if current, else
        from the store (snapshot + steps, read and replayed in a worker thread)."""
        if record.id in self.searches:
            return self.searches[record.id].search
        held = self.cache.pop(record.id, None)
        if held is None or held.rev != record.walk_rev or held.unsaved:
            held = await self._load(record)
        self.searches[record.id] = held
        return held.search

    async def _load(self, record: RoundRecord) -> HeldSearch:
        snapshot = record.walk_json
        if snapshot is None:
            raise StorageFault(f"round {record.id} is {record.phase.value} but has no search")
        steps = await self.tx.search_steps(record.id)
        search = await asyncio.to_thread(replay, record.id, snapshot, steps)
        size = sum(len(step) for step in steps)
        held = HeldSearch(record.walk_rev, search, len(steps), size, len(snapshot))
        held.snapshot_round = round_of(search)
        return held

    def hold_new_search(self, record: RoundRecord, search: AnySearch) -> None:
        """A search just started for ``record``: the next save stores it whole."""
        self.searches[record.id] = HeldSearch(record.walk_rev, search, fresh=True)

    async def step(self, round_id: int, step: SearchStep) -> None:
        """Make the call ``step`` on the round's search (in a worker thread: the numerics can
        be heavy) and note it for the next save. The solver's refusals pass through, and a
        refused call changes nothing and is not noted."""
        held = self.searches[round_id]
        await asyncio.to_thread(apply, held.search, step)
        held.unsaved.append(step)

    async def save_search(self, round_id: int, search: AnySearch) -> None:
        """Store this event's steps of the search in this transaction: appended rows, or a
        new snapshot when one is due (the store deletes the steps it covers). Every write
        moves ``walk_rev`` on by one, and so does ``rev`` here."""
        held = self.searches.get(round_id)
        if held is None or held.search is not search:
            raise BrokenInvariant(f"round {round_id}: saving a search this event does not hold")
        texts = [encode(step) for step in held.unsaved]
        held.unsaved.clear()
        if not texts and not held.fresh:
            return
        steps = held.steps + len(texts)
        step_bytes = held.step_bytes + sum(len(text) for text in texts)
        due = snapshot_due(
            steps=steps,
            step_bytes=step_bytes,
            snapshot_bytes=held.snapshot_bytes,
            limit=self.config.snapshot_every,
            new_round=round_of(search) != held.snapshot_round,
        )
        if held.fresh or due:
            snapshot = await asyncio.to_thread(search.to_json)  # up to ~260 KiB late in a walk
            await self.tx.update_round(round_id, at=self.now, walk_json=snapshot)
            held.rev, held.fresh, held.snapshot_round = held.rev + 1, False, round_of(search)
            held.steps, held.step_bytes, held.snapshot_bytes = 0, 0, len(snapshot)
            return
        for text in texts:
            held.steps += 1
            await self.tx.add_search_step(round_id, held.steps, text, self.now)
            held.rev += 1
        held.step_bytes = step_bytes
