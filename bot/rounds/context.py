"""What every handler works with during one event: the transaction, the time, the outbox.

A :class:`Context` lives for exactly one transaction. Searches loaded during it are kept
aside and only handed back to the engine's cache after the commit, so a refused or failed
event never leaves a half-advanced search in memory.
"""

from __future__ import annotations

import json
from collections import OrderedDict
from dataclasses import dataclass, field
from typing import Any

from bot.rounds.errors import StorageFault
from bot.rounds.messages import Outgoing
from bot.rounds.records import RoundRecord
from bot.rounds.searches import AnySearch, load
from bot.rounds.store_port import Transaction

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


SearchCache = dict[int, tuple[int, AnySearch]]
#: How many rounds' searches the engine keeps in memory (a 10-room walk is about 0.7 MB);
#: rounds that ended are dropped at once, the least recently used beyond this.
CACHED_SEARCHES = 256


class BoundedSearchCache(OrderedDict[int, tuple[int, AnySearch]]):
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

    def search(self, record: RoundRecord) -> AnySearch:
        """The round's search: from this event, from the engine's cache if current, else JSON."""
        if record.id in self.searches:
            return self.searches[record.id][1]
        cached = self.cache.pop(record.id, None)
        if cached is not None and cached[0] == record.walk_rev:
            search = cached[1]
        elif record.walk_json is None:
            raise StorageFault(f"round {record.id} is {record.phase.value} but has no search")
        else:
            search = load(record.id, record.walk_json)
        self.searches[record.id] = (record.walk_rev, search)
        return search

    async def save_search(self, round_id: int, search: AnySearch) -> None:
        """Store the search's JSON in this transaction (the store bumps ``walk_rev``)."""
        rev = self.searches[round_id][0] + 1 if round_id in self.searches else 1
        self.searches[round_id] = (rev, search)
        await self.tx.update_round(round_id, at=self.now, walk_json=search.to_json())
