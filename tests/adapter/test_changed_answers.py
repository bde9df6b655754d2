"""Changing a misclicked answer through the real bot: the button on the answered question.

A real Application polls the stand-in (every call checked against the Bot API spec, fixture
``standin``). A flatmate presses the wrong room, then "I meant another room" on the same
message, picks the room meant, and the round goes on to an agreement that the tenants' own
values (money-metric envy, solver.simulate) confirm nobody would swap out of.
"""

from __future__ import annotations

from pathlib import Path

from bot.adapter.application import running
from bot.sandbox import BotApiStandIn, SimMessage
from tests.adapter.harness import Flat, app_for
from tests.adapter.test_rounds import check_agreement, set_up_and_join


def _button(message: SimMessage, text: str) -> str:
    data = next(b.callback_data for row in message.buttons() for b in row if b.text == text)
    assert data is not None
    return data


async def test_a_flatmate_changes_a_misclick_with_the_button_on_the_answered_question(
    standin: BotApiStandIn, db_path: Path
) -> None:
    flat = Flat.invent(standin, db_path, size=3, rent=3_000_00, seed=5)
    world = standin.world
    person = flat.people[1]
    chat = world.private_chat_of(person)
    async with running(app_for(standin, db_path)):
        await set_up_and_join(flat, "3000.00 EUR", "1.00")

        def first_question() -> SimMessage | None:
            return next(
                (
                    m
                    for m in world.messages_in(chat)
                    if "which room would you take" in (m.text or "")
                ),
                None,
            )

        asked = await standin.wait_for(first_question, 10)
        facts = await flat.question_facts(asked)
        meant = flat.tenants[person.id].choose(facts.prices, facts.choices, 0)
        wrong = next(c for c in facts.choices if c != meant)
        await flat.press(person, asked, _button(asked, f"I'd take {facts.rooms[wrong]}"))

        def answered() -> SimMessage | None:
            now = world.find_message(chat, asked.message_id)
            return now if now is not None and "you chose" in (now.text or "") else None

        saved = await standin.wait_for(answered, 10)
        assert f"you chose {facts.rooms[wrong]}" in (saved.text or "")
        await flat.press(person, saved, _button(saved, "I meant another room"))

        def prompt() -> SimMessage | None:
            return next(
                (
                    m
                    for m in world.messages_in(chat)
                    if "Which room should it have been" in (m.text or "")
                ),
                None,
            )

        which = await standin.wait_for(prompt, 10)
        await flat.press(person, which, _button(which, f"Make it {facts.rooms[meant]}"))

        def changed() -> SimMessage | None:
            return next(
                (m for m in world.messages_in(chat) if (m.text or "").startswith("Changed:")),
                None,
            )

        note = await standin.wait_for(changed, 10)
        assert f"you would take {facts.rooms[meant]}" in (note.text or "")
        settled = await flat.play_until_settled(timeout=120)
    assert settled is not None
    await check_agreement(flat, tolerance=0)
