"""Whole rounds through the engine with simulated tenants, restarts, objections, timers."""

from __future__ import annotations

from collections import deque
from pathlib import Path

import pytest
from flat_scenario import GROUP, RENT, RENT_TEXT, ROOMS, SECRET, people, tenants_for

from bot.adapter.texts import render as render_text
from bot.rounds.caution import CAUTION
from bot.rounds.clock import ManualClock
from bot.rounds.context import EngineConfig
from bot.rounds.engine import Engine
from bot.rounds.events import Event, Press, ShowMyAnswers, Tick
from bot.rounds.invariants import check_dump
from bot.rounds.messages import Action, Kind, Outgoing
from bot.rounds.phases import Phase
from bot.rounds.simulated_rounds import Rehearsal
from bot.storage.sqlite import SqliteStore


def render(message: Outgoing) -> str:
    """The text the adapter would send (English locale)."""
    return render_text(message, "en")


@pytest.mark.parametrize(("size", "seed"), [(3, 1), (4, 2), (5, 3)])
async def test_full_round_settles_envy_free_within_tolerance(
    engine: Engine, store: SqliteStore, size: int, seed: int
) -> None:
    members = people(size)
    tenants = tenants_for(members, seed)

    async def check(_: Rehearsal, __: Event, ___: list[Outgoing]) -> None:
        check_dump(await store.dump())

    play = Rehearsal(engine, GROUP, members[0], members, tenants, after_step=check)
    facts = await play.play(await play.set_up(RENT_TEXT, ROOMS[:size]))
    assert sum(line.price for line in facts.lines) == RENT
    assert sorted(line.room_index for line in facts.lines) == list(range(size))
    for line in facts.lines:  # money-metric envy of the simulated tenant (solver.simulate)
        prices = [0] * size
        for other in facts.lines:
            prices[other.room_index] = other.price
        assert tenants[str(line.user_id)].envy(prices, line.room_index) <= facts.tolerance
    settled = [m for m in play.log if m.kind is Kind.SETTLED]
    assert len(settled) == 1 and CAUTION in render(settled[0])
    dump = await store.dump()
    assert [row[3] for row in dump["rounds"]] == [Phase.SETTLED.value]


async def test_restart_at_every_step_reaches_the_same_agreement(
    tmp_path: Path, clock: ManualClock
) -> None:
    members = people(3)
    tenants = tenants_for(members, 11)
    config = EngineConfig(token_secret=SECRET)

    async with await SqliteStore.open(tmp_path / "steady.sqlite3", clock=clock) as steady_store:
        steady = Rehearsal(
            Engine(steady_store, clock=clock, config=config), GROUP, members[0], members, tenants
        )
        expected = await steady.play(await steady.set_up(RENT_TEXT, ROOMS[:3]))

    path = tmp_path / "restarting.sqlite3"
    holder = {"store": await SqliteStore.open(path, clock=clock)}
    answered: set[tuple[int, tuple[int, ...], str]] = set()

    async def restart(play: Rehearsal, event: Event, out: list[Outgoing]) -> None:
        for message in out:
            if message.kind is Kind.QUESTION:
                assert message.ref is not None
                key = (message.to.chat_id, (), message.ref)
                assert key not in answered, f"question {message.ref} repeated"
        if isinstance(event, Press):
            for message in play.log:
                if message.kind is Kind.QUESTION and any(
                    c.token == event.token for c in message.choices
                ):
                    assert message.ref is not None
                    answered.add((message.to.chat_id, (), message.ref))
        await holder["store"].close()
        holder["store"] = await SqliteStore.open(path, clock=clock)
        check_dump(await holder["store"].dump())
        play.engine = Engine(holder["store"], clock=clock, config=config)

    play = Rehearsal(
        Engine(holder["store"], clock=clock, config=config),
        GROUP,
        members[0],
        members,
        tenants,
        after_step=restart,
    )
    facts = await play.play(await play.set_up(RENT_TEXT, ROOMS[:3]))
    dump = await holder["store"].dump()
    await holder["store"].close()
    assert facts.lines == expected.lines
    assert play.answers == steady.answers
    assert len([q for q in dump["questions"] if q[7] is not None]) == play.answers


async def test_objection_leads_to_more_questions_and_a_settlement(
    engine: Engine, store: SqliteStore
) -> None:
    members = people(3)
    tenants = tenants_for(members, 5)
    play = Rehearsal(engine, GROUP, members[0], members, tenants)
    waiting = deque(await play.set_up(RENT_TEXT, ROOMS[:3]))
    proposal = None
    while proposal is None:  # answer questions (several may be open) until a proposal
        message = waiting.popleft()
        if message.kind is Kind.PROPOSAL:
            proposal = message
        elif message.kind is Kind.QUESTION:
            waiting.extend(await play.answer(message))
    objector = members[1]
    obj = next(c for c in proposal.choices if c.action is Action.OBJECT)
    prompt = await play.send(Press("obj-1", objector, obj.token))
    assert [m.kind for m in prompt] == [Kind.ROOM_PROMPT]
    assert prompt[0].to.private and prompt[0].to.chat_id == objector.user_id
    prefer = prompt[0].choices[0]
    asked_before = play.answers
    after = await play.send(Press("obj-2", objector, prefer.token))
    assert after[0].kind is Kind.OBJECTION_NOTED and not after[0].to.private
    headline = render(after[0]).split(".")[0]
    assert objector.display_name not in headline  # the group is not told who objected
    facts = await play.play(after)
    assert play.answers > asked_before
    assert facts.proposal_no >= 2
    assert sum(line.price for line in facts.lines) == RENT
    stale = await play.send(Press("obj-3", objector, obj.token))
    assert [m.kind for m in stale] == [Kind.REFUSAL]
    mine = await play.send(ShowMyAnswers("mine", GROUP, objector))
    assert mine[0].to.private and mine[0].kind is Kind.MY_ANSWERS
    check_dump(await store.dump())


async def test_reminder_fires_once_and_survives_a_reopen(db_path: Path, clock: ManualClock) -> None:
    members = people(2)
    config = EngineConfig(token_secret=SECRET, reminder_after=3600, hold_up_after=7200)
    store = await SqliteStore.open(db_path, clock=clock)
    play = Rehearsal(
        Engine(store, clock=clock, config=config),
        GROUP,
        members[0],
        members,
        tenants_for(members, 2),
    )
    out = await play.set_up(RENT_TEXT, ROOMS[:2])
    questions = [m for m in out if m.kind is Kind.QUESTION]
    assert len(questions) == 2  # a round asks both members at once
    engine = play.engine
    assert await engine.handle(Tick("t0", clock.advance(3599))) == []
    await store.close()

    store = await SqliteStore.open(db_path, clock=clock)
    engine = Engine(store, clock=clock, config=config)
    pending = await engine.pending_timers()
    assert {t.kind for t in pending} >= {"reminder", "hold-up", "lapse"}
    now = clock.advance(1)
    assert [t.kind for t in await engine.due_timers(now)] == ["reminder", "reminder"]
    fired = await engine.handle(Tick("t1", now))
    assert [(m.kind, m.to.chat_id) for m in fired] == [
        (Kind.REMINDER, q.to.chat_id) for q in questions
    ]
    assert [m.choices for m in fired] == [q.choices for q in questions]  # same tokens
    assert await engine.handle(Tick("t2", clock.advance(60))) == []
    hold_up = await engine.handle(Tick("t3", clock.advance(3600)))
    assert [(m.kind, m.to.chat_id) for m in hold_up] == [(Kind.HOLD_UP, members[0].user_id)]
    await store.close()
