"""Look-ahead questions through the engine: idle members are asked early; misses are withdrawn."""

from __future__ import annotations

from collections import deque

from flat_scenario import GROUP, RENT_TEXT, ROOMS, SECRET, people, tenants_for

from bot.rounds.clock import ManualClock
from bot.rounds.context import EngineConfig
from bot.rounds.engine import Engine
from bot.rounds.events import Press
from bot.rounds.invariants import check_dump
from bot.rounds.messages import Kind, Outgoing, ProgressFacts, QuestionFacts
from bot.rounds.simulated_rounds import Rehearsal
from bot.storage.sqlite import SqliteStore


async def test_parallel_questions_and_withdrawn_ones_are_refused_unchanged(
    store: SqliteStore, clock: ManualClock
) -> None:
    engine = Engine(store, clock=clock, config=EngineConfig(SECRET, look_ahead=True))
    members = people(4)
    play = Rehearsal(engine, GROUP, members[0], members, tenants_for(members, 7))
    # Look-ahead belongs to the walk (one question at a time).
    waiting = deque(await play.set_up(RENT_TEXT, ROOMS[:4], one_by_one=True))
    most_open = 0
    withdrawn: list[Outgoing] = []
    while waiting and not withdrawn:  # answer in arrival order until a guess is withdrawn
        message = waiting.popleft()
        if message.kind is Kind.QUESTION:
            waiting.extend(await play.answer(message))
            open_now = {m.ref for m in play.log if m.kind is Kind.QUESTION} - play.withdrawn
            most_open = max(most_open, len(open_now))
        withdrawn = [m for m in play.log if m.kind is Kind.WITHDRAWN]
        check_dump(await store.dump())
    assert withdrawn, "four members answering in arrival order should miss at least one guess"
    assert most_open >= 2  # an idle member was asked while another question was open
    gone = withdrawn[0]
    assert isinstance(gone.facts, ProgressFacts) and gone.to.private
    question = next(
        m for m in play.log if m.kind is Kind.QUESTION and m.ref == gone.facts.question_ref
    )
    assert isinstance(question.facts, QuestionFacts)
    member = next(a for a in members if a.user_id == question.to.chat_id)
    before = await store.dump()
    out = await engine.handle(Press("late-press", member, question.choices[0].token))
    assert [m.kind for m in out] == [Kind.REFUSAL]
    assert "no longer needed" in out[0].facts.reason  # type: ignore[union-attr]
    assert await store.dump() == before
    # nobody is reminded about a withdrawn question
    timers = [t for t in before["timers"] if t[4] == question.ref.split(":")[1] and t[6] is None]
    assert timers == []
