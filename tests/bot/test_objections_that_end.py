"""Objections that end: never the same split twice, and a bounded round whatever anyone says.

The flatmate who took one room once and another ever after, then objected to every split,
used to get the identical split (same rooms, same prices) back again and again, each time
wiping everyone's agreement and posting to the group, without end. Here the round must end
within a bounded number of group messages, with both methods.
"""

from __future__ import annotations

import pytest
from flat_scenario import GROUP, RENT_TEXT, ROOMS, SECRET, people, tenants_for
from inconsistent_member import FirstThenOther, play_with_objector

from bot.rounds.context import EngineConfig
from bot.rounds.engine import Engine
from bot.rounds.events import Press
from bot.rounds.invariants import check_dump
from bot.rounds.messages import Action, DisagreeFacts, Kind, SplitNoteFacts
from bot.rounds.simulated_rounds import Rehearsal
from bot.storage.sqlite import SqliteStore

NOW = 1_767_225_600
CONFIG = EngineConfig(SECRET)


def _rehearsal(store: SqliteStore) -> tuple[Rehearsal, int]:
    members = people(3)
    tenants = dict(tenants_for(members, 4))
    tenants[str(members[1].user_id)] = FirstThenOther()
    engine = Engine(store, clock=lambda: NOW, config=CONFIG)
    return Rehearsal(engine, GROUP, members[0], members, tenants), 1


@pytest.mark.parametrize("method", ["parallel", "walk"])
@pytest.mark.parametrize("settles", [False, True], ids=["ignores", "changes-answer"])
async def test_an_inconsistent_objector_cannot_keep_a_round_going(
    store: SqliteStore, method: str, settles: bool
) -> None:
    play, objector = _rehearsal(store)
    out = await play.set_up(RENT_TEXT, ROOMS[:3], one_by_one=method == "walk")
    set_up_messages = sum(1 for m in out if not m.to.private)
    outcome = await play_with_objector(
        play, out, play.members[objector], settle_disagreement=settles
    )
    assert outcome.end in (Kind.CANCELLED, Kind.SETTLED)
    # Never the same split posted twice.
    assert len(outcome.splits_posted) == len(set(outcome.splits_posted))
    # Bounded: each objection costs the group at most two messages (the objection noted,
    # then a split or a "same split" note); then the last choice, the acceptances and the end.
    limit = CONFIG.objection_limit
    bound = set_up_messages + 2 * limit + 1 + len(play.members) + 1
    assert outcome.group_messages <= bound
    assert outcome.kinds[Kind.OBJECTION_NOTED] <= limit
    check_dump(await store.dump())


async def test_a_repeated_split_is_not_posted_and_the_objector_sees_both_answers(
    store: SqliteStore,
) -> None:
    play, objector_index = _rehearsal(store)
    objector = play.members[objector_index]
    out = await play.set_up(RENT_TEXT, ROOMS[:3], one_by_one=True)
    outcome = await play_with_objector(play, out, objector, settle_disagreement=False)
    same = [m for m in outcome.log if m.kind is Kind.SAME_SPLIT]
    assert same, "the walk comes back to the same split for this objector"
    note = same[0].facts
    assert isinstance(note, SplitNoteFacts) and note.same_as is not None
    # The note names an earlier split that was posted; nothing was posted in its place.
    posted_numbers = [m.facts.proposal_no for m in outcome.log if m.kind is Kind.PROPOSAL]
    assert note.same_as in posted_numbers and note.proposal_no not in posted_numbers
    assert {c.action for c in same[0].choices} == {Action.ACCEPT, Action.OBJECT}
    disagree = next(m for m in outcome.log if m.kind is Kind.ANSWERS_DISAGREE)
    assert disagree.to.private and disagree.to.chat_id == objector.user_id
    facts = disagree.facts
    assert isinstance(facts, DisagreeFacts)
    # Side by side: the room taken in the split's evidence and the room asked for.
    assert facts.took_room != facts.prefer_room
    assert facts.prefer_room == 0  # the driver always asks for the first room


async def test_keeping_the_earlier_answer_sets_the_objection_aside_quietly(
    store: SqliteStore,
) -> None:
    play, objector_index = _rehearsal(store)
    objector = play.members[objector_index]
    out = await play.set_up(RENT_TEXT, ROOMS[:3], one_by_one=True)
    outcome = await play_with_objector(
        play, out, objector, settle_disagreement=False, stop_at=Kind.SAME_SPLIT
    )
    assert outcome.end is Kind.SAME_SPLIT
    disagree = next(m for m in outcome.log if m.kind is Kind.ANSWERS_DISAGREE)
    before = await store.dump()
    keep = next(c for c in disagree.choices if c.action is Action.KEEP_ANSWER)
    kept = await play.send(Press("keep", objector, keep.token))
    assert [(m.kind, m.to.private) for m in kept] == [(Kind.ANSWER_KEPT, True)]
    after = await store.dump()
    assert after["rounds"] == before["rounds"]  # same phase, same split number, same search
    assert after["questions"] == before["questions"]
    # The split still stands: its buttons (from the "same split" note) still work.
    note = next(m for m in reversed(outcome.log) if m.kind is Kind.SAME_SPLIT)
    agree = next(c for c in note.choices if c.action is Action.ACCEPT)
    agreed = await play.send(Press("agree", play.members[0], agree.token))
    assert [m.kind for m in agreed] == [Kind.ACCEPTED]
    again = await play.send(Press("keep-again", objector, keep.token))
    assert [m.kind for m in again] == [Kind.ANSWER_KEPT]  # harmless, still private
    check_dump(await store.dump())
