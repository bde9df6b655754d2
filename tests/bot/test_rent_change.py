"""A rent change through the engine (SQLite and PostgreSQL): re-priced, confirmed, kept.

Tenants are simulated (solver.simulate, quasi-linear); their money-metric envy is the check.
"""

from __future__ import annotations

import re

import pytest
from flat_scenario import GROUP, RENT, RENT_TEXT, ROOMS, SECRET, people, tenants_for

from bot.adapter.pictures import picture_data, render_png
from bot.adapter.texts import render
from bot.adapter.walk_picture import CAPTION, REPRICED_CAPTION, caption_for
from bot.rounds.caution import CAUTION
from bot.rounds.clock import ManualClock
from bot.rounds.context import EngineConfig
from bot.rounds.engine import Engine
from bot.rounds.events import (
    Actor,
    BeginAsking,
    ChangeRent,
    Configure,
    Join,
    OpenJoining,
    Press,
    Rerun,
    ShowMyAnswers,
    Tick,
)
from bot.rounds.invariants import check_dump
from bot.rounds.messages import (
    Action,
    AgreementFacts,
    DivisionFacts,
    Kind,
    MyAnswersFacts,
    Outgoing,
    RoundFacts,
)
from bot.rounds.phases import Phase
from bot.rounds.searches import records_of
from bot.rounds.setup_input import SetupInput, parse_rent
from bot.rounds.simulated_rounds import Rehearsal
from bot.storage.sqlite import SqliteStore
from solver import Problem
from solver.simulate import Tenant, random_tenants

NEW_RENT = 1_900_00


def change(key: str, actor: Actor, typed: str, locale: str = "en") -> ChangeRent:
    return ChangeRent(key, GROUP, actor, parse_rent(typed, locale), locale)


async def settled_round(
    engine: Engine, size: int = 3, seed: int = 5
) -> tuple[Rehearsal, DivisionFacts, dict[str, Tenant]]:
    members = people(size)
    tenants = tenants_for(members, seed)
    play = Rehearsal(engine, GROUP, members[0], members, tenants)
    facts = await play.play(await play.set_up(RENT_TEXT, ROOMS[:size]))
    return play, facts, tenants


def prices_of(facts: DivisionFacts, rooms: int) -> list[int]:
    prices = [0] * rooms
    for line in facts.lines:
        prices[line.room_index] = line.price
    return prices


def only(out: list[Outgoing], kind: Kind) -> Outgoing:
    found = [m for m in out if m.kind is kind]
    assert len(found) == 1, [m.kind for m in out]
    return found[0]


async def test_new_rent_is_spread_equally_confirmed_and_kept_with_its_history(
    engine: Engine, store: SqliteStore
) -> None:
    play, agreed, tenants = await settled_round(engine)
    out = await play.send(change("rent-1", play.admin, "1,900.00"))
    proposal = only(out, Kind.PROPOSAL)
    facts = proposal.facts
    assert isinstance(facts, DivisionFacts) and facts.previous_rent == RENT
    check_dump(await store.dump())
    # same people in the same rooms; every room 16.66 or 16.67 more, summing to the new rent
    assert [(x.user_id, x.room_index) for x in facts.lines] == [
        (x.user_id, x.room_index) for x in agreed.lines
    ]
    before, after = prices_of(agreed, 3), prices_of(facts, 3)
    assert sum(after) == NEW_RENT
    assert sorted(b - a for a, b in zip(before, after, strict=True)) == [16_66, 16_67, 16_67]
    # true envy of the simulated tenants: as before, up to the one unit of rounding
    for line in facts.lines:
        tenant = tenants[str(line.user_id)]
        was = tenant.envy(before, line.room_index)
        assert tenant.envy(after, line.room_index) <= was + 1 + 1e-6
    text = render(proposal, "en")
    assert "money counts one-for-one" in text and CAUTION in text
    assert "€1,850.00 to €1,900.00" in text

    settled = await play.play(out)  # everyone agrees with the usual buttons
    assert settled.previous_rent == RENT and settled.rent == NEW_RENT
    history = await engine.history(GROUP)
    assert [a.rent for a in history] == [RENT, NEW_RENT]
    assert [x.price for x in history[0].lines] == [x.price for x in agreed.lines]  # unchanged
    assert history[1].previous_rent == RENT
    assert history[1].previous_settled_at == history[0].settled_at
    written = [m.facts for m in play.log if m.kind is Kind.AGREEMENT]
    assert len(written) == 2 and isinstance(written[1], AgreementFacts)
    assert [x.price for x in written[1].lines] == [x.price for x in settled.lines]
    dump = await store.dump()
    assert [row[3] for row in dump["rounds"]] == [Phase.SETTLED.value] * 2
    check_dump(dump)


async def test_my_answers_in_a_re_priced_round_are_the_ones_it_rests_on(
    engine: Engine, store: SqliteStore
) -> None:
    play, _, _ = await settled_round(engine)
    member = play.members[1]
    agreed = only(await play.send(ShowMyAnswers(play.key(), GROUP, member)), Kind.MY_ANSWERS)
    assert isinstance(agreed.facts, MyAnswersFacts) and agreed.facts.lines
    await play.send(change("rent-1", play.admin, "1,900.00"))
    mine = only(await play.send(ShowMyAnswers(play.key(), GROUP, member)), Kind.MY_ANSWERS)
    assert isinstance(mine.facts, MyAnswersFacts)
    assert mine.facts.before_rent_change and not agreed.facts.before_rent_change
    assert mine.facts.lines == agreed.facts.lines
    assert mine.choices == ()  # a settled round's answers can no longer be changed
    text = render(mine, "en")
    assert "asked nobody anything" in text and "only you see this" in text
    check_dump(await store.dump())


async def test_the_picture_of_a_re_priced_split_draws_no_tolerance_band(
    engine: Engine, store: SqliteStore
) -> None:
    """Nobody chose anything at a re-priced split's prices: its picture and caption must not
    show the band "within the tolerance of these", which only answers can vouch for."""
    play, _, _ = await settled_round(engine)
    await play.send(change("rent-1", play.admin, "1,900.00"))
    first, latest = sorted(row[0] for row in (await store.dump())["rounds"])
    pictures = []
    for round_id in (first, latest):
        found = await engine.search_of(round_id)
        assert found is not None
        pictures.append(picture_data(found[0]))
    agreed, repriced = pictures
    assert agreed.band and not repriced.band
    assert caption_for(agreed) == CAPTION and caption_for(repriced) == REPRICED_CAPTION
    assert "tolerance" not in REPRICED_CAPTION and CAUTION in REPRICED_CAPTION
    assert sum(repriced.proposal or ()) == NEW_RENT
    for data in pictures:  # both draw (three rooms: the triangle)
        assert render_png(data, "EUR").startswith(b"\x89PNG")


async def test_an_objection_asks_questions_again_from_that_answer(
    engine: Engine, store: SqliteStore
) -> None:
    play, _, _ = await settled_round(engine)
    out = await play.send(change("rent-1", play.admin, "1800"))
    proposal = only(out, Kind.PROPOSAL)
    objector = play.members[2]
    first = await play.send(Press("acc", play.members[0], _token(proposal, Action.ACCEPT)))
    assert only(first, Kind.ACCEPTED)
    prompt = await play.send(Press("obj-1", objector, _token(proposal, Action.OBJECT)))
    prefer = only(prompt, Kind.ROOM_PROMPT).choices[0]
    after = await play.send(Press("obj-2", objector, prefer.token))
    assert after[0].kind is Kind.OBJECTION_NOTED and not after[0].to.private
    assert any(m.kind is Kind.QUESTION for m in after)
    dump = await store.dump()
    check_dump(dump)
    latest = max(dump["rounds"], key=lambda row: row[0])
    assert latest[3] == Phase.ASKING.value
    assert all(row[4] is None for row in dump["members"] if row[0] == latest[0])  # cleared
    stale = await play.send(Press("acc-late", play.members[1], _token(proposal, Action.ACCEPT)))
    assert [m.kind for m in stale] == [Kind.REFUSAL]
    settled = await play.play(after)
    assert settled.previous_rent is None  # found by questions this time
    assert sum(line.price for line in settled.lines) == 1_800_00
    assert [a.rent for a in await engine.history(GROUP)] == [RENT, 1_800_00]
    check_dump(await store.dump())


def _token(message: Outgoing, action: Action) -> str:
    return next(c.token for c in message.choices if c.action is action)


async def test_reminders_reach_members_of_a_re_priced_round(
    engine: Engine, store: SqliteStore, clock: ManualClock
) -> None:
    play, _, _ = await settled_round(engine)
    await play.send(change("rent-1", play.admin, "1900"))
    clock.advance(EngineConfig(token_secret=SECRET).reminder_after + 1)
    out = await play.send(Tick("tick-1", clock()))
    reminders = [m for m in out if m.kind is Kind.REMINDER]
    assert sorted(m.to.chat_id for m in reminders) == sorted(m.user_id for m in play.members)
    assert all(isinstance(m.facts, DivisionFacts) and m.facts.previous_rent for m in reminders)


@pytest.mark.parametrize(
    ("typed", "why"),
    [
        ("1850.00", "€1,850.00 already; nothing changed"),
        ("1900 GBP", "the agreement is in EUR"),
        ("0", "must be more than zero"),
        ("100", "would cost -€"),
        ("1900.005", "has 3; type it with at most 2"),
    ],
)
async def test_refusals_are_one_line_in_the_groups_format_and_store_nothing(
    engine: Engine, store: SqliteStore, typed: str, why: str
) -> None:
    play, _, _ = await settled_round(engine)
    before = await store.dump()
    out = await play.send(change("bad", play.admin, typed))
    text = render(only(out, Kind.REFUSAL), "en")
    assert why in text and "\n" not in text
    assert re.search(r"\d{5,}", text) is None  # amounts as €1,850.00, never minor units
    assert await store.dump() == before


async def test_below_the_floor_suggests_a_fresh_round(engine: Engine) -> None:
    play, agreed, _ = await settled_round(engine)
    cheapest = min(agreed.lines, key=lambda line: line.price)
    out = await play.send(change("low", play.admin, "100"))
    text = render(only(out, Kind.REFUSAL), "en")
    assert f"at €100.00, {cheapest.room} would cost -€" in text
    assert "below the lowest price per room of €0.00" in text and "/again" in text


async def test_only_admins_may_change_the_rent(
    engine: Engine, store: SqliteStore, clock: ManualClock
) -> None:
    play, _, _ = await settled_round(engine)
    member = play.members[1]
    out = await play.send(change("not-admin", member, "1900"))
    assert "only the person who started this round or a group admin" in render(
        only(out, Kind.REFUSAL), "en"
    )
    strict = Engine(
        store, clock=clock, config=EngineConfig(token_secret=SECRET, only_admins_start=True)
    )
    refused = await strict.handle(change("strict", play.admin, "1900"))
    assert "only the group's admins" in render(only(refused, Kind.REFUSAL), "en")
    outsider_admin = Actor(999, "Group owner", is_chat_admin=True)  # a chat admin may
    assert only(await strict.handle(change("chat-admin", outsider_admin, "1900")), Kind.PROPOSAL)


async def test_needs_an_agreement_and_no_open_round(engine: Engine, store: SqliteStore) -> None:
    admin = people(1)[0]
    out = await engine.handle(change("none", admin, "1900"))
    assert "no agreement to re-price yet" in render(only(out, Kind.REFUSAL), "en")
    play, _, _ = await settled_round(engine)
    await play.send(change("first", play.admin, "1900"))
    again = await play.send(change("second", play.admin, "1950"))
    assert "has an open round" in render(only(again, Kind.REFUSAL), "en")


async def test_an_empty_room_stays_empty_and_moves_with_the_others(
    engine: Engine, store: SqliteStore
) -> None:
    members = people(3)
    problem = Problem(RENT, ROOMS[:4], [str(m.user_id) for m in members])
    tenants = random_tenants(problem, "quasi-linear", 8)
    play = Rehearsal(engine, GROUP, members[0], members, tenants)
    setup = SetupInput.parse(RENT_TEXT, ROOMS[:4], empty_allowed=True)
    out = await play.send(Configure(play.key(), GROUP, play.admin, setup))
    out += await play.send(OpenJoining(play.key(), GROUP, play.admin))
    for member in members:
        out += await play.send(Join(play.key(), GROUP, member))
    out += await play.send(BeginAsking(play.key(), GROUP, play.admin))
    agreed = await play.play(out)
    assert len(agreed.empty_rooms) == 1
    empty = ROOMS.index(agreed.empty_rooms[0])

    changed = await play.send(change("rent-1", play.admin, "1,700.00"))
    facts = only(changed, Kind.PROPOSAL).facts
    assert isinstance(facts, DivisionFacts) and facts.empty_rooms == agreed.empty_rooms
    assert sum(line.price for line in facts.lines) == 1_700_00
    # -150.00 over three let rooms is -50.00 each; the empty room moves the same, not below 0
    assert facts.empty_prices == (max(agreed.empty_prices[0] - 50_00, 0),)
    for line in facts.lines:
        old = next(x for x in agreed.lines if x.user_id == line.user_id)
        assert line.price == old.price - 50_00
        prices = [0] * 4
        for x in facts.lines:
            prices[x.room_index] = x.price
        prices[empty] = facts.empty_prices[0]
        before = [0] * 4
        for x in agreed.lines:
            before[x.room_index] = x.price
        before[empty] = agreed.empty_prices[0]
        tenant = tenants[str(line.user_id)]
        assert tenant.envy(prices, line.room_index) <= tenant.envy(before, line.room_index) + 1e-6
    check_dump(await store.dump())
    settled = await play.play(changed)
    assert settled.empty_rooms == agreed.empty_rooms


async def test_a_re_run_after_a_rent_change_reuses_the_answers_it_rests_on(
    engine: Engine, store: SqliteStore
) -> None:
    play, agreed, _ = await settled_round(engine)
    await play.play(await play.send(change("rent-1", play.admin, "1900")))
    out = await play.send(Rerun(play.key(), GROUP, play.admin, keep_members=True))
    assert len([m for m in out if m.kind is Kind.EARLIER_OFFER]) == 3
    await play.send(OpenJoining(play.key(), GROUP, play.admin))
    started = only(await play.send(BeginAsking(play.key(), GROUP, play.admin)), Kind.ASKING_STARTED)
    assert isinstance(started.facts, RoundFacts)
    assert sorted(started.facts.reused) == sorted(m.display_name for m in play.members)
    latest = max(row[0] for row in (await store.dump())["rounds"])
    found = await engine.search_of(latest)
    assert found is not None
    earlier = {(r.member, r.room) for r in records_of(found[0]) if r.source == "earlier"}
    # each member's supporting answer from the first agreement, carried through the re-pricing
    assert earlier == {(str(line.user_id), line.room_index) for line in agreed.lines}
    check_dump(await store.dump())


async def test_works_months_later_when_the_answers_are_deleted(
    engine: Engine, store: SqliteStore, clock: ManualClock
) -> None:
    play, agreed, _ = await settled_round(engine)
    clock.advance(200 * 24 * 3600)  # past keeping answers (60 days) and the log (30 days)
    forgotten = await engine.forget(clock())
    assert len(forgotten) == 1
    out = await play.send(change("rent-later", play.admin, "1900"))
    facts = only(out, Kind.PROPOSAL).facts
    assert isinstance(facts, DivisionFacts) and sum(x.price for x in facts.lines) == NEW_RENT
    settled = await play.play(out)
    assert [x.room_index for x in settled.lines] == [x.room_index for x in agreed.lines]
    check_dump(await store.dump())
