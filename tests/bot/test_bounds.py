"""Rounds have bounds: a question limit with a clear end, and a bounded memory of searches.

Outside reference: none needed beyond the counts themselves; the invariant checker
(bot/rounds/invariants.py) runs over the whole store after the stop.
"""

from __future__ import annotations

from flat_scenario import GROUP, RENT_TEXT, ROOMS, SECRET, people, tenants_for

from bot.rounds.context import BoundedSearchCache, EngineConfig
from bot.rounds.engine import Engine
from bot.rounds.events import Press
from bot.rounds.invariants import check_dump
from bot.rounds.messages import Kind, RoundFacts
from bot.rounds.simulated_rounds import Rehearsal
from bot.storage.sqlite import SqliteStore

NOW = 1_767_225_600


async def test_a_round_that_would_ask_too_much_stops_clearly(store: SqliteStore) -> None:
    members = people(4)
    config = EngineConfig(SECRET, max_questions_per_member=2)
    engine = Engine(store, clock=lambda: NOW, config=config)
    play = Rehearsal(engine, GROUP, members[0], members, tenants_for(members, 11))
    out = await play.set_up(RENT_TEXT, ROOMS[:4])
    questions = [m for m in out if m.kind is Kind.QUESTION]
    for question in questions:  # round 1
        out = await play.answer(question)
    round_two = [m for m in play.log if m.kind is Kind.QUESTION and m not in questions]
    assert len(round_two) == 4, "this seed needs more than one round (pick another seed)"
    for question in round_two:
        out = await play.answer(question)
    stopped = [m for m in play.log if m.kind is Kind.STOPPED_AT_LIMIT]
    assert len(stopped) == 1 and not stopped[0].to.private
    facts = stopped[0].facts
    assert isinstance(facts, RoundFacts) and facts.question_limit == 2
    assert not any(m.kind is Kind.PROPOSAL for m in play.log)
    dump = await store.dump()
    check_dump(dump)
    assert [row[3] for row in dump["rounds"]] == ["lapsed"]
    assert all(q[7] is not None or q[9] is not None for q in dump["questions"])  # none open
    # Nobody was asked a third question, and a press on anything now changes nothing.
    asked = [m.to.chat_id for m in play.log if m.kind is Kind.QUESTION]
    assert max(asked.count(a.user_id) for a in members) == 2
    late = await engine.handle(Press("late", members[0], questions[0].choices[0].token))
    assert [m.kind for m in late] == [Kind.REFUSAL]
    assert await store.dump() == dump
    assert engine.cached_rounds == ()  # the ended round's search is no longer held


def test_the_search_cache_never_holds_more_than_its_limit() -> None:
    cache = BoundedSearchCache(limit=2)
    fake = object()
    for round_id in range(1, 6):
        cache.keep({round_id: (1, fake)}, set())  # type: ignore[dict-item]
        assert len(cache) <= 2
    assert list(cache) == [4, 5]  # the least recently used went first
    cache.keep({4: (2, fake)}, {5})  # type: ignore[dict-item]
    assert list(cache) == [4]
