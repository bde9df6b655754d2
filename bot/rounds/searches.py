"""The bot's view of a round's search: either method, loaded, saved and read the same way.

A round asks with the parallel search by default (:class:`solver.ParallelSearch`: a whole
round of questions at once, every member in parallel) or, as a per-round setting, with the
walk (:class:`solver.Walk`: one question at a time). Both satisfy :class:`solver.Search`;
this module adds what the bot needs beyond it: every answer the search holds (for progress
counts, audits and answer reuse), the round number people are told, and the method's own
estimate of how many rounds to expect. The stored column is still called ``walk`` (renaming
it would need a migration for nothing).
"""

from __future__ import annotations

from typing import Literal

from bot.rounds.errors import StorageFault
from bot.rounds.repriced_search import RepricedSearch, is_repriced
from solver import InvalidState, ParallelSearch, Walk, resume
from solver.parallel import TYPICAL, TYPICAL_ROUGH
from solver.protocol import Record

#: ``RepricedSearch``: a round that starts at a re-priced agreement (a rent change)
AnySearch = ParallelSearch | Walk | RepricedSearch
Method = Literal["parallel", "walk"]


def load(round_id: int, text: str) -> AnySearch:
    """A stored search, continued exactly; a damaged one is a storage fault, not a refusal."""
    try:
        return RepricedSearch.from_json(text) if is_repriced(text) else resume(text)
    except InvalidState as exc:
        raise StorageFault(f"round {round_id}: {exc}") from exc


def records_of(search: AnySearch) -> list[Record]:
    """Every label the search holds, in order (after a hand-over, the walk's too)."""
    return search.all_records() if isinstance(search, ParallelSearch) else list(search.records)


def round_of(search: AnySearch) -> int | None:
    """The round people are in (1-based); None when questions go one at a time."""
    if isinstance(search, ParallelSearch) and search.walk is None:
        return search.round_number
    return None


def expected_rounds(search: AnySearch) -> int | None:
    """About how many rounds the search takes in all (its own estimate); None for the walk,
    and None once a round has gone past its estimate: an estimate that creeps up by one
    every round tells people nothing."""
    if not isinstance(search, ParallelSearch) or search.walk is not None:
        return None
    estimate = search.expected_rounds()
    if search.proposal() is None and estimate <= search.round_number + 1:
        typical = (TYPICAL_ROUGH if search.rough is not None else TYPICAL)[search.problem.size]
        if search.round_number >= typical:
            return None
    return estimate
