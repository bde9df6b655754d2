"""Changing an answer ("I meant another room") through the engine, with both methods.

A member misclicks once and changes it straight away with the button on the answered
question. The round must then end exactly where a round without the misclick ends (the
solver is deterministic and the change is replayed as a new fact), the audit log must record
the change, and buttons of questions the change replaced must refuse and store nothing.
"""

from __future__ import annotations

import json
from collections import deque
from collections.abc import Sequence
from pathlib import Path

import pytest
from flat_scenario import GROUP, RENT_TEXT, ROOMS, SECRET, people, tenants_for

from bot.rounds.context import EngineConfig
from bot.rounds.engine import Engine
from bot.rounds.events import Press, ShowMyAnswers
from bot.rounds.invariants import Dump, check_dump
from bot.rounds.messages import (
    Action,
    ChangeFacts,
    DivisionFacts,
    Kind,
    Outgoing,
    ProgressFacts,
    QuestionFacts,
)
from bot.rounds.records import AuditKind
from bot.rounds.search_steps import replay
from bot.rounds.simulated_rounds import Rehearsal
from bot.storage.sqlite import SqliteStore
from solver import ParallelSearch, exact_certificate, resume
from solver.simulate import Tenant

NOW = 1_767_225_600


class Misclicks:
    """A tenant who, at their ``at``-th question, presses the room next to the one they mean."""

    def __init__(self, tenant: Tenant, at: int) -> None:
        self.tenant, self.at, self.asked = tenant, at, 0
        self.meant: int | None = None

    def choose(self, prices: Sequence[int], choices: Sequence[int], floor: int) -> int:
        self.asked += 1
        room = self.tenant.choose(prices, choices, floor)
        others = [c for c in choices if c != room]
        if self.asked == self.at and others:
            self.meant = room
            return others[0]
        return room

    def envy(self, prices: Sequence[int], room: int) -> float:
        return self.tenant.envy(prices, room)


async def _settle(
    store: SqliteStore, method: str, *, misclick_at: int | None
) -> tuple[DivisionFacts, Rehearsal]:
    members = people(3)
    tenants: dict[str, Tenant] = dict(tenants_for(members, 6))
    clicker = str(members[1].user_id)
    if misclick_at is not None:
        tenants[clicker] = Misclicks(tenants[clicker], misclick_at)
    engine = Engine(store, clock=lambda: NOW, config=EngineConfig(SECRET))
    play = Rehearsal(engine, GROUP, members[0], members, tenants)
    queue = deque(await play.set_up(RENT_TEXT, ROOMS[:3], one_by_one=method == "walk"))
    while queue:
        message = queue.popleft()
        if message.kind is Kind.SETTLED:
            assert isinstance(message.facts, DivisionFacts)
            return message.facts, play
        mind = tenants.get(str(message.to.chat_id))
        if (
            message.kind is Kind.PROGRESS
            and isinstance(mind, Misclicks)
            and mind.meant is not None
            and mind.asked == mind.at
        ):
            queue.extend(await _change(play, message, mind.meant))
            mind.meant = None
        else:
            queue.extend(await play.react(message))
    raise AssertionError("the round did not settle")


async def _change(play: Rehearsal, progress: Outgoing, room: int) -> list[Outgoing]:
    """Press "I meant another room" on the answered question, then the room meant."""
    member = next(m for m in play.members if m.user_id == progress.to.chat_id)
    wrong = next(c for c in progress.choices if c.action is Action.CHANGE_ANSWER)
    prompt = await play.send(Press(play.key(), member, wrong.token))
    assert [m.kind for m in prompt] == [Kind.CHANGE_PROMPT]
    meant = next(c for c in prompt[0].choices if c.room == room)
    out = await play.send(Press(play.key(), member, meant.token))
    assert out[0].kind is Kind.ANSWER_CHANGED and out[0].to.chat_id == member.user_id
    return out


@pytest.mark.parametrize("method", ["parallel", "walk"])
@pytest.mark.parametrize("misclick_at", [1, 2])
async def test_a_changed_misclick_ends_where_a_round_without_it_ends(
    tmp_path: Path, method: str, misclick_at: int
) -> None:
    clean_store = await SqliteStore.open(tmp_path / "clean.sqlite3", clock=lambda: NOW)
    store = await SqliteStore.open(tmp_path / "changed.sqlite3", clock=lambda: NOW)
    try:
        clean, _ = await _settle(clean_store, method, misclick_at=None)
        changed, play = await _settle(store, method, misclick_at=misclick_at)
        assert changed.lines == clean.lines
        # Once the round is agreed, "I meant another room" refuses and changes nothing.
        answered = next(m for m in play.log if m.kind is Kind.PROGRESS and m.choices)
        member = next(m for m in play.members if m.user_id == answered.to.chat_id)
        late = await play.send(Press("late", member, answered.choices[0].token))
        assert [m.kind for m in late] == [Kind.REFUSAL]
        assert "agreed" in late[0].facts.reason  # type: ignore[union-attr]
        dump = await store.dump()
        check_dump(dump)
        clean_dump = await clean_store.dump()
    finally:
        await store.close()
        await clean_store.close()
    # The stored search (snapshot plus steps) is the one the clean round ended with (same
    # answers, same order).
    assert _searches(dump) == _searches(clean_dump)
    changes = [row for row in dump["audit"] if row[3] == AuditKind.ANSWER_CHANGED]
    assert len(changes) == 1
    detail = json.loads(changes[0][5])
    assert detail["room"] != detail["was"]


async def test_buttons_of_replaced_questions_refuse_and_store_nothing(store: SqliteStore) -> None:
    members = people(3)
    tenants = tenants_for(members, 6)
    engine = Engine(store, clock=lambda: NOW, config=EngineConfig(SECRET))
    play = Rehearsal(engine, GROUP, members[0], members, tenants)
    first = [m for m in await play.set_up(RENT_TEXT, ROOMS[:3]) if m.kind is Kind.QUESTION]
    # Round 1: the first member misclicks, the others answer; round 2 goes out.
    wrong_room = None
    later: list[Outgoing] = []
    for question in first:
        facts = question.facts
        assert isinstance(facts, QuestionFacts)
        mind = tenants[str(question.to.chat_id)]
        room = mind.choose(facts.prices, facts.choices, 0)
        if question.to.chat_id == members[0].user_id:
            wrong_room, room = room, next(c for c in facts.choices if c != room)
        token = next(c.token for c in question.choices if c.room == room)
        member = next(m for m in members if m.user_id == question.to.chat_id)
        later += await play.send(Press(play.key(), member, token))
    second = [m for m in later if m.kind is Kind.QUESTION]
    assert len(second) == 3, "round 2 asks everyone"
    progress = next(
        m for m in later if m.kind is Kind.PROGRESS and m.to.chat_id == members[0].user_id
    )
    assert wrong_room is not None
    out = await _change(play, progress, wrong_room)
    replaced = {m.ref for m in out if m.kind is Kind.WITHDRAWN}
    replaced |= {
        m.facts.question_ref
        for m in out
        if m.kind is Kind.WITHDRAWN and isinstance(m.facts, ProgressFacts)
    }
    stale = [q for q in second if q.ref in replaced]
    assert stale, "the change replaced the open round-2 questions"
    before = await store.dump()
    for question in stale:
        member = next(m for m in members if m.user_id == question.to.chat_id)
        refused = await play.send(Press(play.key(), member, question.choices[0].token))
        assert [m.kind for m in refused] == [Kind.REFUSAL]
        assert "replaced" in refused[0].facts.reason  # type: ignore[union-attr]
    after = await store.dump()
    assert after["questions"] == before["questions"] and after["audit"] == before["audit"]
    # The old "I meant another room" button now points at an answer that no longer counts.
    old = next(c for c in progress.choices if c.action is Action.CHANGE_ANSWER)
    again = await play.send(Press(play.key(), members[0], old.token))
    assert [m.kind for m in again] == [Kind.REFUSAL]
    # Someone else cannot change this member's answer.
    theirs = await play.send(Press(play.key(), members[1], old.token))
    assert [m.kind for m in theirs] == [Kind.REFUSAL]
    # The member's list shows the change, with a button to change the answer again.
    mine = await play.send(ShowMyAnswers(play.key(), GROUP, members[0]))
    assert mine[0].kind is Kind.MY_ANSWERS
    hows = [line.how for line in mine[0].facts.lines]  # type: ignore[union-attr]
    assert hows[:2] == ["set-aside", AuditKind.ANSWER_CHANGED]
    assert [c.action for c in mine[0].choices] == [Action.CHANGE_ANSWER]
    prompt = await play.send(Press(play.key(), members[0], mine[0].choices[0].token))
    assert prompt[0].kind is Kind.CHANGE_PROMPT
    assert isinstance(prompt[0].facts, ChangeFacts) and prompt[0].facts.old_room == wrong_room
    check_dump(await store.dump())


def _searches(dump: Dump) -> list[str]:
    """Each round's search as the store holds it, loaded: its snapshot with its steps."""
    steps: dict[int, list[str]] = {}
    for row in sorted(dump.get("search_steps", []), key=lambda row: (row[0], row[1])):
        steps.setdefault(row[0], []).append(row[2])
    return [replay(r[0], r[5], steps.get(r[0], [])).to_json() for r in dump["rounds"]]


async def test_with_rounds_a_changed_first_answer_keeps_every_later_answer(
    store: SqliteStore,
) -> None:
    """Three rounds of three answered, then the very first answer changes. With rounds every
    later answer stays true at its own prices, so none is set aside and nobody is told; the
    round then still ends in an exact certificate (each took their room at exactly the final
    prices), which is envy-free by the definition for the simulated tenants' true values. A
    kept answer can itself be changed, and changed back."""
    members = people(3)
    tenants: dict[str, Tenant] = dict(tenants_for(members, 6))
    first = str(members[0].user_id)
    clicker = Misclicks(tenants[first], 1)
    tenants[first] = clicker
    engine = Engine(store, clock=lambda: NOW, config=EngineConfig(SECRET))
    play = Rehearsal(engine, GROUP, members[0], members, tenants)
    queue = deque(await play.set_up(RENT_TEXT, ROOMS[:3]))
    while play.answers < 9:
        message = queue.popleft()
        assert message.kind is not Kind.PROPOSAL, "three rounds without a proposal"
        queue.extend(await play.react(message))
    progress = next(
        m for m in play.log if m.kind is Kind.PROGRESS and m.to.chat_id == members[0].user_id
    )
    assert clicker.meant is not None
    out = await _change(play, progress, clicker.meant)
    assert not [m for m in out if m.kind is Kind.ANSWERS_SET_ASIDE], "nobody is told"
    changed = out[0].facts
    assert isinstance(changed, ChangeFacts) and changed.set_aside == 0
    dump = await store.dump()
    assert not [row for row in dump["audit"] if row[3] == AuditKind.ANSWER_SET_ASIDE]
    detail = json.loads(next(row for row in dump["audit"] if row[3] == AuditKind.ANSWER_CHANGED)[5])
    assert detail["set_aside"] == [] and len(detail["kept_as_facts"]) == 6, "rounds 2 and 3"
    # Everyone's answers still count, and each has its change button.
    second = members[1]
    mine = await play.send(ShowMyAnswers(play.key(), GROUP, second))
    hows = [line.how for line in mine[0].facts.lines]  # type: ignore[union-attr]
    assert len(hows) == 3 and "set-aside" not in hows
    assert [c.action for c in mine[0].choices] == [Action.CHANGE_ANSWER] * 3
    # A kept answer (round 3's) is changed, then changed back.
    prompt = await play.send(Press(play.key(), second, mine[0].choices[-1].token))
    assert isinstance(prompt[0].facts, ChangeFacts)
    kept_room = prompt[0].facts.old_room
    other = prompt[0].choices[0]
    again = await play.send(Press(play.key(), second, other.token))
    assert again[0].kind is Kind.ANSWER_CHANGED
    back_button = again[0].choices[0]
    prompt = await play.send(Press(play.key(), second, back_button.token))
    back = next(c for c in prompt[0].choices if c.room == kept_room)
    out += again + await play.send(Press(play.key(), second, back.token))
    settled = await play.play([*queue, *out])
    assert settled.lines
    dump = await store.dump()
    check_dump(dump)
    search = resume(_searches(dump)[0])
    proposal = search.proposal()
    assert isinstance(search, ParallelSearch) and proposal is not None
    assert exact_certificate(proposal) and proposal.envy_bound == 0
    for member, room in proposal.assignment.items():  # envy-free by the definition
        assert tenants[member].envy(proposal.prices, room) <= 0
    assert not [row for row in dump["audit"] if row[3] == AuditKind.ANSWER_SET_ASIDE]
