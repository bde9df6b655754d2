"""Saving and restoring a parallel search: its inputs, the event log and the plans made.

Format ``flatpact-rounds`` version 1, a JSON object with ``problem``, ``options``,
``rough`` (or null), ``earlier`` (member -> list of ``[prices, room]``), ``log`` (events in
order: ``["answer", question_id, room]``, ``["close"]``, ``["dispute", member, room]``,
``["facts", [[question_id, member, prices, room], ...]]`` (:mod:`solver.parallel_facts`; logs saved
before facts existed simply hold none) and
``plans`` (each round's ``[mode, base, asks, assignment]``). Loading starts the search from
the inputs and replays the log; stored plans are used instead of recomputing them, so a
restart shows members exactly the questions they saw, even where floating point differs.
After a hand-over the walk is rebuilt the same way (its start is a function of the log) and
its answers are part of the same log.
"""

from __future__ import annotations

import json
from typing import TYPE_CHECKING, Any

from solver import parallel_facts
from solver.errors import BrokenInvariant, InvalidState
from solver.problem import Problem
from solver.rounds import ParallelOptions, Plan

if TYPE_CHECKING:
    from solver.parallel import ParallelSearch

FORMAT_NAME = "flatpact-rounds"
FORMAT_VERSION = 1


def dump(search: ParallelSearch) -> str:
    data = {
        "format": FORMAT_NAME,
        "version": FORMAT_VERSION,
        "problem": search.problem.to_dict(),
        "options": search.options.to_dict(),
        "rough": search.rough,
        "earlier": {m: [[list(p), r] for p, r in said] for m, said in search.earlier.items()},
        "log": [list(e) for e in search.log],
        "plans": [p.to_list() for p in search.plans],
    }
    return json.dumps(data, separators=(",", ":"))


def load(cls: type[ParallelSearch], text: str, *, use_plans: bool) -> ParallelSearch:
    """Rebuild a search; a damaged or foreign text raises :class:`InvalidState`."""
    try:
        data = json.loads(text)
        if data.get("format") != FORMAT_NAME or data.get("version") != FORMAT_VERSION:
            raise InvalidState(
                f"saved search has format {data.get('format')!r} version "
                f"{data.get('version')!r}; this Flatpact reads {FORMAT_NAME} v{FORMAT_VERSION}"
            )
        plans = [Plan.from_list(p) for p in data["plans"]] if use_plans else []
        return _rebuild(cls, data, plans)
    except (KeyError, TypeError, ValueError, IndexError, AttributeError) as exc:
        if isinstance(exc, InvalidState):
            raise
        raise InvalidState(f"saved search is damaged and cannot be resumed: {exc}") from exc


def _rebuild(cls: type[ParallelSearch], data: dict[str, Any], plans: list[Plan]) -> ParallelSearch:
    earlier = {m: [(tuple(p), r) for p, r in said] for m, said in data["earlier"].items()}
    search = cls(
        Problem.from_dict(data["problem"]),
        ParallelOptions.from_dict(data["options"]),
        data["rough"],
        earlier,
        plans,
    )
    search.begin()
    for event in data["log"]:
        kind, *args = event
        if kind == "answer":
            search.answer(str(args[0]), int(args[1]))
        elif kind == "close":
            search.close_round()
        elif kind == "dispute":
            search.dispute(str(args[0]), int(args[1]))
        elif kind == parallel_facts.EVENT:
            parallel_facts.apply_event(search, args[0])
        else:
            raise BrokenInvariant(f"unknown event {kind!r} in a saved search")
    return search
