"""What people rely on most, against the stand-in: private stays private, presses are answered,
an open round is never overwritten, a resent update changes nothing.

Outside reference: the Telegram Bot API spec checks every call (fixture ``standin``); after a
group's upgrade the old id answers 400 with ``migrate_to_chat_id`` (ResponseParameters in the
spec). The flat and its people are invented (tests/adapter/harness.py).
"""

from __future__ import annotations

from pathlib import Path

from bot.adapter.application import running
from bot.adapter.texts import board
from bot.sandbox import BotApiStandIn, SimMessage
from tests.adapter.harness import ROOMS, Flat, app_for, runtime
from tests.adapter.privacy import assert_private_stays_private
from tests.adapter.test_rounds import check_agreement, set_up_and_join

FAILED_ON_OUR_SIDE = "Something went wrong on my side"


async def test_upgrade_during_a_press_keeps_private_answers_private(
    standin: BotApiStandIn, db_path: Path
) -> None:
    flat = Flat.invent(standin, db_path, size=3, rent=1_500_00, seed=11)
    world = standin.world
    async with running(app_for(standin, db_path)):
        await set_up_and_join(flat, "1500.00 EUR", "10")
        await flat.play_until_settled(stop_after_answers=2)
        old_group = flat.group

        def upgrade_now() -> None:  # the press is queued, the bot has not seen it yet
            flat.group = world.upgrade_to_supergroup(old_group)
            flat.on_press = None

        flat.on_press = upgrade_now  # play_until_settled checks privacy after every step
        settled = await flat.play_until_settled()
        assert settled is not None and settled.chat.id == flat.group.id
        answers = [c.answer_text or "" for c in world.callbacks.values()]
        assert not [a for a in answers if FAILED_ON_OUR_SIDE in a]
    await assert_private_stays_private(standin, db_path)
    await check_agreement(flat, tolerance=10_00)


async def test_progress_message_follows_the_group_through_an_upgrade(
    standin: BotApiStandIn, db_path: Path
) -> None:
    flat = Flat.invent(standin, db_path, size=3, rent=1_500_00, seed=11)
    world = standin.world
    app = app_for(standin, db_path)
    async with running(app):
        await set_up_and_join(flat, "1500.00 EUR", "10")
        await flat.play_until_settled(stop_after_answers=2)
        flat.group = world.upgrade_to_supergroup(flat.group)
        await flat.play_until_settled(stop_after_answers=5)
        status = await runtime(app).engine.status(group_id=flat.group.id)
        assert status is not None and status.answered >= 5
        expected = board(status, "en")

        def board_shown() -> SimMessage | None:
            return next(
                (m for m in world.messages_in(flat.group) if (m.text or "").startswith(expected)),
                None,
            )

        shown = await standin.wait_for(board_shown, timeout=10)
        boards = [
            m
            for m in world.messages_in(flat.group)
            if "Questions answered" in (m.text or "") or "Answers so far" in (m.text or "")
        ]
        assert boards == [shown]  # re-posted once in the new chat, then edited there


async def test_presses_are_answered_while_the_group_is_slow(
    standin: BotApiStandIn, db_path: Path
) -> None:
    flat = Flat.invent(standin, db_path, size=4, rent=2_000_00, seed=3)
    world = standin.world
    async with running(app_for(standin, db_path)):
        await set_up_and_join(flat, "2000.00 EUR", "20")
        await flat.play_until_settled(stop_when_group_sees="Suggested split")

        def agree_button() -> tuple[SimMessage, str] | None:
            for message in world.messages_in(flat.group):
                for row in message.buttons():
                    for button in row:
                        if button.text == "Agree" and button.callback_data:
                            return message, button.callback_data
            return None

        proposal, agree = await standin.wait_for(agree_button)
        standin.hold_chat(flat.group.id)  # every send or edit to the group now waits
        presses = [world.user_presses(person, proposal, agree) for person in flat.people]
        # Four members press at once: each press is answered although the group edits wait.
        await standin.wait_for(lambda: all(p.answered for p in presses), timeout=8)
        assert [p.answer_text for p in presses if FAILED_ON_OUR_SIDE in (p.answer_text or "")] == []
        standin.release_chat(flat.group.id)
        await flat.wait_group("Everyone agreed", timeout=15)
    await check_agreement(flat, tolerance=20_00)


async def test_one_slow_group_does_not_hold_up_another(
    standin: BotApiStandIn, db_path: Path
) -> None:
    world = standin.world
    slow = Flat.invent(standin, db_path, size=2, rent=800_00, seed=1)
    quick = Flat.invent(standin, db_path, size=2, rent=800_00, seed=2)
    async with running(app_for(standin, db_path)):
        standin.hold_chat(slow.group.id)
        world.user_says(slow.admin, slow.group, "/status")
        await standin.wait_for(lambda: standin.parked > 0, timeout=5)
        world.user_says(quick.admin, quick.group, "/status")
        await quick.wait_group("No round yet", timeout=5)
        standin.release_chat(slow.group.id)
        await slow.wait_group("No round yet", timeout=5)


async def test_second_newround_is_refused_and_changes_nothing(
    standin: BotApiStandIn, db_path: Path
) -> None:
    flat = Flat.invent(standin, db_path, size=3, rent=1_850_00, seed=4)
    world = standin.world
    app = app_for(standin, db_path)
    async with running(app):
        world.user_says(flat.admin, flat.group, f"/newround 1850.00 EUR; {', '.join(ROOMS[:3])}")
        opened = await flat.wait_group("The round is open")
        join_text = opened.text
        before = flat.group_texts()
        world.user_says(flat.admin, flat.group, "/newround 2400.00 EUR; Porch, Den")
        refusal = await flat.wait_group("Not done")
        assert "already" in (refusal.text or "") and "/cancelround" in (refusal.text or "")
        assert flat.group_texts() == [*before, refusal.text]  # nothing else was posted
        assert opened.text == join_text
        status = await runtime(app).engine.status(group_id=flat.group.id)
        assert status is not None
        assert (status.round.rent, status.round.rooms) == (1_850_00, ROOMS[:3])


async def test_start_delivered_twice_greets_once(standin: BotApiStandIn, db_path: Path) -> None:
    world = standin.world
    person = world.add_user("Odile", language_code="en")
    chat = world.private_chat_of(person)
    async with running(app_for(standin, db_path)):
        start = world.user_opens_private_chat(person)
        await standin.wait_for(lambda: len(world.messages_in(chat)) == 2)
        world.deliver_again(start)
        world.user_says(person, chat, "/help")
        await standin.wait_for(lambda: len(world.messages_in(chat)) >= 4)
    greetings = [m for m in world.messages_in(chat) if m.from_bot and "Hello!" in (m.text or "")]
    assert len(greetings) == 1


async def test_a_word_where_the_amount_goes_is_called_a_bad_amount(
    standin: BotApiStandIn, db_path: Path
) -> None:
    flat = Flat.invent(standin, db_path, size=2, rent=800_00, seed=1)
    world = standin.world
    async with running(app_for(standin, db_path)):
        world.user_says(flat.admin, flat.group, "/newround abc EUR; Skylight, Corner")
        reply = await flat.wait_group("Not done")
    assert "'abc EUR' is not an amount I can read" in (reply.text or "")
    assert "currency code" not in (reply.text or "")
