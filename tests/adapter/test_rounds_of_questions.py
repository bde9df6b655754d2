"""Rounds of questions through the real bot: everyone at once, ending in an exact split.

The prediction comes from the solver alone (``solver.start`` and the benchmark's round
driver ``solver.simulate.answer_in_rounds``) with the same problem and the same simulated
tenants; the bot must reach its split in exactly that many rounds, because a round ends when
everyone has answered, whatever order the answers arrive in. Outside references: the Bot
API spec checks every call (fixture ``standin``); envy-freeness by the tenants' own values
(money-metric envy, solver.simulate) is the yardstick for the split.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from bot.adapter.application import running
from bot.rounds.search_steps import stored_search
from bot.sandbox import BotApiStandIn
from bot.storage.sqlite import SqliteStore
from solver import ParallelSearch, Problem, start
from solver.simulate import answer_in_rounds
from tests.adapter.harness import ROOMS, Flat, app_for
from tests.adapter.test_rounds import check_agreement, set_up_and_join

RENT = 3_000_00
TOLERANCE = 1_00


@pytest.mark.parametrize(("size", "seed"), [(4, 3), (6, 8)])
async def test_a_round_ends_exactly_in_the_rounds_the_solver_predicts(
    standin: BotApiStandIn, db_path: Path, size: int, seed: int
) -> None:
    flat = Flat.invent(standin, db_path, size=size, rent=RENT, seed=seed)
    members = tuple(str(p.id) for p in flat.people)
    problem = Problem(RENT, ROOMS[:size], members, TOLERANCE)
    predicted = answer_in_rounds(
        start(problem), {str(p.id): flat.tenants[p.id] for p in flat.people}
    )
    async with running(app_for(standin, db_path)):
        await set_up_and_join(flat, "3000.00 EUR", "1.00")
        settled = await flat.play_until_settled(timeout=120)
    assert settled is not None
    store = await SqliteStore.open(db_path)
    try:
        async with store.transaction() as tx:
            record = await tx.latest_round(flat.group.id)
            assert record is not None
            search = await stored_search(tx, record)
    finally:
        await store.close()
    assert isinstance(search, ParallelSearch) and search.walk is None
    assert search.round_number == predicted
    proposal = search.proposal()
    assert proposal is not None
    # A certificate: every member chose their room at exactly the proposed prices.
    assert all(e.prices == proposal.prices for e in proposal.evidence)
    assert "Each of you chose your room at exactly these prices." in (
        settled.text or settled.caption or ""
    )
    await check_agreement(flat, tolerance=0)
