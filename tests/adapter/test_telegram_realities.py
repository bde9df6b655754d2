"""What Telegram throws at a bot: people who never started it, flood control, restarts, forged
or stale buttons, guided set-up under privacy mode, commands meant for another bot.

Outside reference: the Telegram Bot API spec (bot/sandbox/botapi/api.json) validates
every call through the ``standin`` fixture; error wording is Telegram's (bot/sandbox/errors.py).
The flat and its people are invented.
"""

from __future__ import annotations

from pathlib import Path

from bot.adapter.application import running
from bot.adapter.keyboards import CALLBACK_PREFIX
from bot.sandbox import BotApiStandIn, SimChat, SimMessage
from bot.storage.sqlite import SqliteStore
from tests.adapter.harness import ROOMS, Flat, app_for, outbox_rows, runtime
from tests.adapter.test_rounds import check_agreement, set_up_and_join


async def test_member_without_private_chat_gets_a_deep_link_then_the_round_goes_on(
    standin: BotApiStandIn, db_path: Path
) -> None:
    flat = Flat.invent(standin, db_path, size=3, rent=900_00, seed=3, open_chats=False)
    world = standin.world
    for person in flat.people[:2]:
        world.user_opens_private_chat(person)
    late = flat.people[2]
    async with running(app_for(standin, db_path)):
        await set_up_and_join(flat, "900.00 EUR", "10")
        await flat.play_until_settled(stop_when_group_sees="cannot write to you privately")
        notice = await flat.wait_group(f"{late.first_name}, I cannot write to you privately")
        # Telegram deep linking: t.me/<bot>?start=<payload> (core.telegram.org/bots/features).
        link = f"https://t.me/{world.bot.username}?start=round_m{abs(flat.group.id)}"
        assert link in (notice.text or "")
        world.user_opens_private_chat(late, f"round_m{abs(flat.group.id)}")
        settled = await flat.play_until_settled()
        assert settled is not None
    await check_agreement(flat, tolerance=10_00)
    # The held messages were sent once each, after /start.
    rows = await outbox_rows(db_path)
    assert {r["state"] for r in rows} == {"sent"}


async def test_flood_control_mid_round_loses_and_repeats_nothing(
    standin: BotApiStandIn, db_path: Path
) -> None:
    flat = Flat.invent(standin, db_path, size=3, rent=1_500_00, seed=11)
    async with running(app_for(standin, db_path)):
        await set_up_and_join(flat, "1500.00 EUR", "10")
        await flat.play_until_settled(stop_after_answers=2)
        standin.fail_next("sendMessage", 2, error_code=429, retry_after=1)
        standin.fail_next("editMessageText", 1, error_code=429, retry_after=1)
        settled = await flat.play_until_settled(timeout=30)
        assert settled is not None
    await check_agreement(flat, tolerance=10_00)
    failed = [c for c in standin.calls if c.status == 429]
    assert len(failed) == 3
    rows = await outbox_rows(db_path)
    assert {r["state"] for r in rows} == {"sent"}
    # Each stored outgoing message that became its own Telegram message exists exactly once.
    sent_ids = [
        (r["chat_id"], r["message_id"])
        for r in rows
        if r["kind"] in ("question", "proposal", "settled")
    ]
    assert len(sent_ids) == len(set(sent_ids))
    texts = [(m.chat.id, m.text) for m in standin.world.messages if m.from_bot]
    questions = [t for t in texts if t[1] and t[1].startswith("Question")]
    assert len(questions) == len({t for t in questions})


async def test_bot_restarted_mid_round_finishes_with_nothing_lost(
    standin: BotApiStandIn, db_path: Path
) -> None:
    flat = Flat.invent(standin, db_path, size=3, rent=1_500_00, seed=11)
    async with running(app_for(standin, db_path)):
        await set_up_and_join(flat, "1500.00 EUR", "10")
        await flat.play_until_settled(stop_after_answers=3)
    async with running(app_for(standin, db_path)):
        settled = await flat.play_until_settled()
        assert settled is not None
    await check_agreement(flat, tolerance=10_00)
    rows = await outbox_rows(db_path)
    assert {r["state"] for r in rows} == {"sent"}


async def test_forged_foreign_double_and_late_presses_are_refused_without_change(
    standin: BotApiStandIn, db_path: Path
) -> None:
    flat = Flat.invent(standin, db_path, size=3, rent=1_500_00, seed=11)
    world = standin.world
    stranger = world.add_user("Quentin", language_code="en")
    world.user_opens_private_chat(stranger)
    async with running(app_for(standin, db_path)) as app:
        await set_up_and_join(flat, "1500.00 EUR", "10")
        await flat.play_until_settled(stop_after_answers=1)
        answered = await world.wait_for(
            lambda: next(
                (
                    m
                    for p in flat.people
                    for m in world.messages_in(world.private_chat_of(p))
                    if m.text and "you chose " in m.text
                ),
                None,
            )
        )
        owner = answered.chat.private_with
        assert owner is not None
        open_question = await world.wait_for(
            lambda: next(
                (
                    m
                    for p in flat.people
                    for m in world.messages_in(world.private_chat_of(p))
                    if m.buttons()
                ),
                None,
            )
        )
        token_data = open_question.buttons()[0][0].callback_data
        assert token_data is not None
        store: SqliteStore = runtime(app).store  # type: ignore[assignment]
        # Presses are answered before their messages go out: wait until sending is done.
        assert await runtime(app).delivery.flush()
        before = await store.dump()
        attempts = [
            (owner, open_question, CALLBACK_PREFIX + "AAAAAAAAAAAA"),  # forged token
            (owner, open_question, "something-else"),  # not our format at all
            (stranger, open_question, token_data),  # a non-member with a forwarded question
        ]
        # A double press / late press: the first question's button, after it was answered.
        first_data = await _first_answer_data(db_path, answered)
        attempts.append((owner, answered, first_data))
        expected = ("not valid any more", "not one of mine", "not a member", "already answered")
        for (person, message, data), reason in zip(attempts, expected, strict=True):
            record = world.user_presses(person, message, data, forge=True)
            await world.wait_for(lambda record=record: record.answered, timeout=5)
            assert reason in (record.answer_text or ""), (data, record.answer_text)
        assert await store.dump() == before


async def _first_answer_data(db_path: Path, answered: object) -> str:
    """The callback data of a button the answered question had, from its stored payload."""
    from bot.adapter.keyboards import callback_data
    from bot.rounds.outbox_codec import decode

    rows = await outbox_rows(db_path)
    row = next(
        r
        for r in rows
        if r["message_id"] == answered.message_id  # type: ignore[attr-defined]
        and r["chat_id"] == answered.chat.id
        and r["kind"] == "question"
    )  # type: ignore[attr-defined]
    return callback_data(decode(row["payload"]).choices[0].token)


async def test_guided_set_up_by_replies_under_privacy_mode(
    standin: BotApiStandIn, db_path: Path
) -> None:
    flat = Flat.invent(standin, db_path, size=2, rent=800_00, seed=2)
    world = standin.world
    assert world.privacy_mode
    async with running(app_for(standin, db_path)):
        world.user_says(flat.admin, flat.group, "/newround")
        ask_rent = await flat.wait_group("What is the total monthly rent")
        assert ask_rent.reply_markup == {
            "force_reply": True,
            "selective": True,
            "input_field_placeholder": "Reply here",
        }
        # An ordinary message is not delivered (privacy mode) and changes nothing.
        assert not world.user_says(flat.people[1], flat.group, "lovely flat").delivered
        world.user_replies(flat.admin, ask_rent, "800 dollars")
        again = await flat.wait_group("Please reply with the rent again")
        world.user_replies(flat.admin, again, "800.00 EUR")
        ask_rooms = await flat.wait_group("Now the rooms")
        world.user_replies(flat.admin, ask_rooms, f"{ROOMS[0]}, {ROOMS[1]}")
        opened = await flat.wait_group("The round is open")
        assert f"Rooms: {ROOMS[0]}, {ROOMS[1]}." in (opened.text or "")


async def test_commands_for_another_bot_are_ignored(standin: BotApiStandIn, db_path: Path) -> None:
    flat = Flat.invent(standin, db_path, size=2, rent=800_00, seed=2)
    world = standin.world
    world.make_admin(flat.group, world.bot)  # an admin bot sees every message
    async with running(app_for(standin, db_path)):
        world.user_says(flat.admin, flat.group, "/newround@another_helper_bot 800 EUR; A, B")
        world.user_says(flat.admin, flat.group, f"/status@{world.bot.username}")
        status = await flat.wait_group("No round yet")
        assert status.reply_to is not None
    assert flat.group_texts() == [status.text]


async def test_group_upgraded_to_a_supergroup_keeps_its_round(
    standin: BotApiStandIn, db_path: Path
) -> None:
    # Bot API: after an upgrade the old chat id answers 400 with parameters.migrate_to_chat_id
    # (ResponseParameters in the spec), and service messages carry migrate_to/from_chat_id.
    flat = Flat.invent(standin, db_path, size=3, rent=1_500_00, seed=11)
    world = standin.world
    async with running(app_for(standin, db_path)):
        await set_up_and_join(flat, "1500.00 EUR", "10")
        await flat.play_until_settled(stop_after_answers=2)
        old_group = flat.group
        flat.group = world.upgrade_to_supergroup(old_group)
        upgraded_at = len(world.messages_in(old_group))
        world.user_says(flat.admin, flat.group, "/status")
        status = await flat.wait_group("Answers so far")
        assert status.chat.id == flat.group.id
        settled = await flat.play_until_settled()
        assert settled is not None and settled.chat.id == flat.group.id
        late = [m for m in world.messages_in(old_group)[upgraded_at:] if m.from_bot]
        assert late == []  # nothing more went to the old id once the move was known
    await check_agreement(flat, tolerance=10_00)


async def test_guided_set_ups_in_two_groups_keep_their_own_rent(
    standin: BotApiStandIn, db_path: Path
) -> None:
    # One admin, two flats, the two guided set-ups interleaved: each round gets its own rent.
    flat = Flat.invent(standin, db_path, size=2, rent=800_00, seed=2)
    world = standin.world
    other = world.add_group("The other flat", flat.people)
    admin = flat.admin

    async def asked(chat: SimChat, fragment: str, after: int) -> SimMessage:
        def found() -> SimMessage | None:
            return next(
                (
                    m
                    for m in world.messages_in(chat)[after:]
                    if m.from_bot and fragment in (m.text or "")
                ),
                None,
            )

        return await standin.wait_for(found, 10)

    async with running(app_for(standin, db_path)):
        world.user_says(admin, flat.group, "/newround")
        rent_here = await asked(flat.group, "What is the total monthly rent", 0)
        world.user_says(admin, other, "/newround")
        rent_there = await asked(other, "What is the total monthly rent", 0)
        world.user_replies(admin, rent_here, "800.00 EUR")
        rooms_here = await asked(flat.group, "Now the rooms", 0)
        world.user_replies(admin, rent_there, "1200.00 EUR")
        rooms_there = await asked(other, "Now the rooms", 0)
        world.user_replies(admin, rooms_here, f"{ROOMS[0]}, {ROOMS[1]}")
        await asked(flat.group, "The round is open", 0)
        world.user_replies(admin, rooms_there, "North room, South room")
        await asked(other, "The round is open", 0)
    async with await SqliteStore.open(db_path) as store, store.transaction() as tx:
        here = await tx.latest_round(flat.group.id)
        there = await tx.latest_round(other.id)
    assert here is not None and there is not None
    assert (here.settings.rent, here.settings.rooms) == (800_00, (ROOMS[0], ROOMS[1]))
    assert (there.settings.rent, there.settings.rooms) == (1200_00, ("North room", "South room"))
