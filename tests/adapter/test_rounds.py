"""Whole rounds through the real bot: set-up, joining, private questions, proposal, agreement.

Outside references: the Telegram Bot API spec (bot/sandbox/botapi/api.json) checks
every call (fixture ``standin``); Babel's CLDR data formats the expected amounts. The flat and
its people are invented (tests/adapter/harness.py).
"""

from __future__ import annotations

from pathlib import Path

from bot.adapter.application import running
from bot.adapter.keyboards import CALLBACK_DATA_LIMIT
from bot.adapter.texts import COMMANDS
from bot.rounds.caution import CAUTION
from bot.sandbox import BotApiStandIn
from tests.adapter.harness import ROOMS, Flat, app_for, euros


async def set_up_and_join(flat: Flat, rent_text: str, tolerance: str) -> None:
    world = flat.standin.world
    rooms = ", ".join(ROOMS[: len(flat.people)])
    world.user_says(
        flat.admin, flat.group, f"/newround {rent_text}; {rooms}; tolerance {tolerance}"
    )
    opened = await flat.wait_group("The round is open")
    join = next(b for row in opened.buttons() for b in row if b.text == "Count me in")
    assert join.callback_data is not None
    # Telegram Bot API: callback_data is 1-64 bytes (InlineKeyboardButton).
    assert len(join.callback_data.encode()) <= CALLBACK_DATA_LIMIT
    for person in flat.people:
        await flat.press(person, opened, join.callback_data)
    await flat.wait_group("Every room has a member now")
    world.user_says(flat.admin, flat.group, "/begin")
    await flat.wait_group("Everyone is in")


async def check_agreement(flat: Flat, tolerance: int) -> None:
    assignment, prices = await flat.agreement()
    assert sum(prices) == flat.rent
    assert sorted(assignment.values()) == list(range(len(flat.people)))
    for person in flat.people:
        room = assignment[str(person.id)]
        # The solver's promise: nobody envies anyone by more than the tolerance.
        assert flat.tenants[person.id].envy(prices, room) <= tolerance
    settled = await flat.wait_group("Everyone agreed")
    text = settled.text or settled.caption or ""
    assert CAUTION in text
    assert f"Total {euros(flat.rent)}, which matches the rent" in text
    for person in flat.people:
        line = f"• {person.first_name}: {ROOMS[assignment[str(person.id)]]}, "
        assert line + euros(prices[assignment[str(person.id)]]) in text
    # No stale answer buttons: every private question has been edited to show the choice.
    # (An answered question keeps "I meant another room", and a change prompt its "Make it"
    # buttons; once the round is agreed they refuse: tests/bot/test_changed_answers.py.)
    world = flat.standin.world
    for person in flat.people:
        for message in world.messages_in(world.private_chat_of(person)):
            labels = [b.text for row in message.buttons() for b in row]
            assert not [label for label in labels if label.startswith("I'd take")], message.text


async def test_three_flatmates_agree(standin: BotApiStandIn, db_path: Path) -> None:
    flat = Flat.invent(standin, db_path, size=3, rent=1_500_00, seed=11)
    async with running(app_for(standin, db_path)):
        # setMyCommands at start-up, with the commands /help lists (Bot API: BotCommand).
        registered = standin.calls_to("setMyCommands")[-1]["commands"]
        assert [c["command"] for c in registered] == [name for name, _ in COMMANDS]
        await set_up_and_join(flat, "1500.00 EUR", "10")
        settled = await flat.play_until_settled()
        assert settled is not None
        await check_agreement(flat, tolerance=10_00)
    # Every button press was answered (Bot API: answerCallbackQuery must follow a press).
    assert all(record.answered for record in standin.world.callbacks.values())


async def test_five_flatmates_agree(standin: BotApiStandIn, db_path: Path) -> None:
    flat = Flat.invent(standin, db_path, size=5, rent=1_200_00, seed=5)
    async with running(app_for(standin, db_path)):
        await set_up_and_join(flat, "1200.00 EUR", "20")
        board = await flat.wait_group("Everyone is in")
        settled = await flat.play_until_settled()
        assert settled is not None
        await check_agreement(flat, tolerance=20_00)
        # The progress line counts answers and never shows anyone's choice.
        shown = board.text or ""
        assert "Questions answered so far" in shown or "Answers so far" in shown
        for room in ROOMS[:5]:
            assert f"took {room}" not in (board.text or "")
    assert all(record.answered for record in standin.world.callbacks.values())


async def test_setting_up_joining_and_starting_post_one_group_message(
    standin: BotApiStandIn, db_path: Path
) -> None:
    # A quiet group chat (common practice for bots in groups): set-up, joins and the start
    # of the questions all rewrite the round's one status message.
    flat = Flat.invent(standin, db_path, size=3, rent=1_500_00, seed=4)
    async with running(app_for(standin, db_path)):
        await set_up_and_join(flat, "1500.00 EUR", "10")
    posted = [m for m in standin.world.messages_in(flat.group) if m.from_bot]
    assert len(posted) == 1
    (status,) = posted
    text = status.text or ""
    assert text.startswith("Everyone is in")  # the opening message, rewritten at /begin
    assert "Members (3 of 3)" in text  # ... after being rewritten as people joined
    assert "I assume that you would take a free room" in text
    assert not any(b.text == "Count me in" for row in status.buttons() for b in row)
    joined = [
        c
        for c in standin.calls
        if c.method == "editMessageText" and c.params.get("message_id") == status.message_id
    ]
    assert len(joined) >= 4  # three joins and the start of the questions
