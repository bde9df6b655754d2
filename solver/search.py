"""The solver's entry point: start or resume a search, parallel rounds or the walk.

``start`` returns a :class:`ParallelSearch` by default (a whole round of questions at once,
learning between rounds, the walk as its fallback) or a :class:`Walk` (one question at a
time) with ``method="walk"``. Both satisfy :class:`Search`, so callers can type against the
protocol. ``resume`` reads back what ``to_json`` wrote, dispatching on the format name.
"""

from __future__ import annotations

import json
from collections.abc import Mapping, Sequence
from typing import Literal, Protocol

from solver.errors import InvalidProblem, InvalidState
from solver.parallel import FORMAT_NAME as PARALLEL_FORMAT
from solver.parallel import ParallelSearch
from solver.problem import Problem
from solver.protocol import Counters, Options, Proposal, Question
from solver.rounds import ParallelOptions
from solver.walk import FORMAT_NAME as WALK_FORMAT
from solver.walk import Walk
from solver.warm_start import WARM_FIRST_MESH_PER_ROOM, maximin_split

Method = Literal["parallel", "walk"]
Earlier = Mapping[str, Sequence[tuple[Sequence[int], int]]]


class Search(Protocol):
    """What the bot may call on either method."""

    problem: Problem

    def open_questions(self) -> list[Question]: ...

    def answer(self, question_id: str, room_index: int) -> None: ...

    def proposal(self) -> Proposal | None: ...

    def dispute(self, member: str, room_index: int) -> None: ...

    @property
    def counters(self) -> Counters: ...

    def questions_per_member(self) -> dict[str, int]: ...

    def check(self) -> None: ...

    def to_json(self) -> str: ...


def _both_are_searches(walk: Walk, parallel: ParallelSearch) -> tuple[Search, Search]:
    """Never called: mypy checks here that both methods satisfy :class:`Search`."""
    return walk, parallel


def start(
    problem: Problem,
    *,
    method: Method = "parallel",
    options: ParallelOptions | Options | None = None,
    rough_values: Sequence[Sequence[float]] | None = None,
    earlier: Earlier | None = None,
) -> ParallelSearch | Walk:
    """Begin a search for ``problem``.

    ``options`` is a :class:`ParallelOptions` for the parallel method or an
    :class:`Options` for the walk. ``rough_values[member][room]`` (members in the problem's
    order, minor units) only steer where the search looks first: a soft prior for the
    parallel method, the maximin start for the walk. ``earlier`` maps staying members to
    ``(prices, room)`` answers from a previous round of the same rooms.
    """
    if method == "parallel":
        if options is not None and not isinstance(options, ParallelOptions):
            raise InvalidProblem("the parallel method takes ParallelOptions; pass those or none")
        return ParallelSearch.start(
            problem, options=options, rough_values=rough_values, earlier=earlier
        )
    if method == "walk":
        if options is not None and not isinstance(options, Options):
            raise InvalidProblem("the walk takes solver.Options; pass those or none")
        start_prices = None
        if rough_values is not None and not problem.empty_count:
            start_prices = maximin_split(rough_values, problem.rent, problem.floor).prices
            options = options or Options(first_mesh_per_room=WARM_FIRST_MESH_PER_ROOM)
        return Walk.start(problem, options=options, start_prices=start_prices, earlier=earlier)
    raise InvalidProblem(f"unknown method {method!r}; use 'parallel' or 'walk'")


def resume(text: str) -> ParallelSearch | Walk:
    """Continue a search saved with ``to_json`` (either method)."""
    try:
        name = json.loads(text).get("format")
    except (ValueError, AttributeError) as exc:
        raise InvalidState(f"saved search is damaged and cannot be resumed: {exc}") from exc
    if name == PARALLEL_FORMAT:
        return ParallelSearch.from_json(text)
    if name == WALK_FORMAT:
        return Walk.from_json(text)
    raise InvalidState(
        f"saved search has format {name!r}; this Flatpact reads {PARALLEL_FORMAT} and {WALK_FORMAT}"
    )
