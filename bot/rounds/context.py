"""What every handler works with during one event: the transaction, the time, the outbox.

A :class:`Context` lives for exactly one transaction. Walks loaded during it are kept aside
and only handed back to the engine's cache after the commit, so a refused or failed event
never leaves a half-advanced walk in memory.
"""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from typing import Any

from bot.rounds.errors import StorageFault
from bot.rounds.messages import Outgoing
from bot.rounds.records import RoundRecord
from bot.rounds.store_port import Transaction
from solver import InvalidState, Walk

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
    #: only the group chat's admins may start a round (``/newround``, ``/again``, ``/changeover``)
    only_admins_start: bool = False
    #: retention (:mod:`bot.rounds.retention`): days a finished round's answers are kept,
    #: and days processed event keys and sent messages are kept
    keep_answers_days: int = 60
    keep_log_days: int = 30


WalkCache = dict[int, tuple[int, Walk]]


@dataclass
class Context:
    """One event's working set; handlers append to ``out`` in the order messages should go."""

    tx: Transaction
    now: int
    config: EngineConfig
    cache: WalkCache
    out: list[Outgoing] = field(default_factory=list)
    walks: WalkCache = field(default_factory=dict)

    def send(self, message: Outgoing) -> None:
        self.out.append(message)

    async def audit(self, round_id: int, kind: str, user_id: int | None, **detail: Any) -> None:
        await self.tx.audit(round_id, self.now, kind, user_id, json.dumps(detail, sort_keys=True))

    def walk(self, record: RoundRecord) -> Walk:
        """The round's walk: from this event, from the engine's cache if current, else JSON."""
        if record.id in self.walks:
            return self.walks[record.id][1]
        cached = self.cache.pop(record.id, None)
        if cached is not None and cached[0] == record.walk_rev:
            walk = cached[1]
        elif record.walk_json is None:
            raise StorageFault(f"round {record.id} is {record.phase.value} but has no walk")
        else:
            try:
                walk = Walk.from_json(record.walk_json)
            except InvalidState as exc:
                raise StorageFault(f"round {record.id}: {exc}") from exc
        self.walks[record.id] = (record.walk_rev, walk)
        return walk

    async def save_walk(self, round_id: int, walk: Walk) -> None:
        """Store the walk's JSON in this transaction (the store bumps ``walk_rev``)."""
        rev = self.walks[round_id][0] + 1 if round_id in self.walks else 1
        self.walks[round_id] = (rev, walk)
        await self.tx.update_round(round_id, at=self.now, walk_json=walk.to_json())
