"""Plain data of the parallel search: its options, one round's plan, and the event log.

Kept apart from :mod:`solver.parallel` so the search itself is only behaviour. Everything
here has a JSON round trip; a saved search is its inputs, the ordered event log and the
plans already made (see :class:`solver.parallel.ParallelSearch` for why the plans are kept).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any, Literal

Mode = Literal["centre", "near-tie", "adjust"]
MODES: tuple[Mode, ...] = ("centre", "near-tie", "adjust")

#: ``("answer", question_id, room)``, ``("close",)``, ``("dispute", member, room)`` or
#: ``("facts", [[question_id, member, prices, room], ...])`` (:mod:`solver.parallel_facts`).
Event = tuple[Any, ...]


@dataclass(frozen=True, slots=True)
class ParallelOptions:
    """Knobs of the parallel search.

    ``max_rounds``: after this many rounds the search hands over to the walk, passing every
    answer on, so the walk's termination guarantee applies (about 30: the issue's cap, well
    above the benchmark's p90 for tastes the model fits).
    """

    max_rounds: int = 30

    def to_dict(self) -> dict[str, int]:
        return {"max_rounds": self.max_rounds}

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> ParallelOptions:
        return cls(max_rounds=int(data["max_rounds"]))


@dataclass(frozen=True, slots=True)
class Plan:
    """One round: the common prices, the planned rooms, and each member's question prices.

    ``base`` is the price list a proposal of this round would use; ``asks[i]`` is what member
    ``i`` is shown (equal to ``base`` except in a near-tie round). ``assignment[i]`` is the
    room the estimates expect member ``i`` to take (``None`` in a model-free round).
    """

    mode: Mode
    base: tuple[int, ...]
    asks: tuple[tuple[int, ...], ...]
    assignment: tuple[int, ...] | None

    def to_list(self) -> list[Any]:
        assignment = list(self.assignment) if self.assignment is not None else None
        return [self.mode, list(self.base), [list(a) for a in self.asks], assignment]

    @classmethod
    def from_list(cls, data: Sequence[Any]) -> Plan:
        mode, base, asks, assignment = data
        if mode not in MODES:
            raise ValueError(f"unknown round mode {mode!r}")
        return cls(
            mode,
            tuple(base),
            tuple(tuple(a) for a in asks),
            tuple(assignment) if assignment is not None else None,
        )
