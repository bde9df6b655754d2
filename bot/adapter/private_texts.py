"""What the bot says in a member's private chat: questions, prompts, their own answers.

Our own words; amounts shown with Babel in the person's locale (:mod:`bot.rounds.money_text`).
Kept apart from :mod:`bot.adapter.texts` (group texts and the dispatcher) so each module stays
one concern.
"""

from __future__ import annotations

from bot.rounds.caution import SHORT_CAUTION
from bot.rounds.messages import (
    EarlierFacts,
    MyAnswersFacts,
    PromptFacts,
    QuestionFacts,
    RoughFacts,
)
from bot.rounds.money_text import shown


def money(minor: int, currency: str, decimals: int, locale: str) -> str:
    """``€1,234.50``: exact minor units in the locale's currency format (``decimals`` is the
    currency's own, kept for the callers' signature)."""
    return shown(minor, currency, locale)


#: How the invitation to give rough values begins (the demo's flatmates look for it).
ROUGH_INVITE_OPENING = "Optional, to help me ask fewer rounds of questions"


def rough(f: RoughFacts, locale: str) -> str:
    """Private: the invitation to give rough values, or what was noted."""
    if f.values is None:
        example = ", ".join(str(600 + 50 * (i % 3)) for i in range(len(f.rooms)))
        return (
            f"{ROUGH_INVITE_OPENING}: reply here with roughly what "
            f"each room is worth to you a month, in this order: {', '.join(f.rooms)}. For "
            f"example: {example}\n"
            "Only the method sees them, only to choose the first questions; they never decide "
            "anything and nobody else sees them. Skip this if you like."
        )
    listed = ", ".join(
        f"{room} {money(v, f.currency, f.decimals, locale)}"
        for room, v in zip(f.rooms, f.values, strict=True)
    )
    return (
        f"Noted, privately: {listed}. They only steer the first questions; send new ones "
        "to change them before the questions start."
    )


def earlier_offer(f: EarlierFacts) -> str:
    """Private, to a member of the previous round: keep the old answers or start afresh."""
    if not f.usable:
        return (
            "Welcome back. The rooms are not the same as in the last round, so your earlier "
            "answers cannot be matched up; you will answer afresh."
        )
    if f.keep is None:
        return (
            "Welcome back. You answered questions in the last round of this flat. If those "
            "answers still describe your preferences, I can reuse them and ask you fewer "
            "questions. If you do not choose before the questions start, I reuse them."
        )
    if f.keep:
        return "Noted: I will reuse your earlier answers. You can still change this."
    return "Noted: you will answer afresh. You can still change this."


def _price_lines(
    rooms: tuple[str, ...], prices: tuple[int, ...], currency: str, decimals: int, locale: str
) -> list[str]:
    return [
        f"• {room}: {money(p, currency, decimals, locale)}"
        for room, p in zip(rooms, prices, strict=True)
    ]


def _label(f: QuestionFacts) -> str:
    """``Round 3 of about 7`` with the parallel search, ``Question 5`` with the walk."""
    if f.round_number is None:
        return f"Question {f.number_for_member}"
    if f.expected_rounds is not None and f.expected_rounds > f.round_number:
        return f"Round {f.round_number} of about {f.expected_rounds}"
    return f"Round {f.round_number}"


def question(f: QuestionFacts, locale: str, *, reminder: bool) -> str:
    head = "Reminder, this one is still open.\n" if reminder else ""
    offered = ", ".join(f.rooms[i] for i in f.choices)
    return "\n".join(
        [
            f"{head}{_label(f)}: at these prices, which room would you take?",
            *_price_lines(f.rooms, f.prices, f.currency, f.decimals, locale),
            f"(You can pick: {offered}.)",
        ]
    )


WITHDRAWN_NOTE = (
    "No longer needed: the round went on without this answer, or a changed answer replaced "
    "this question. Nothing to do."
)


def withdrawn_question(f: QuestionFacts, locale: str) -> str:
    """A question asked ahead of time that the walk no longer needs: prices kept, no buttons."""
    return "\n".join(
        [
            f"{_label(f)}: at these prices,",
            *_price_lines(f.rooms, f.prices, f.currency, f.decimals, locale),
            WITHDRAWN_NOTE,
        ]
    )


def answered_question(f: QuestionFacts, room: str, locale: str) -> str:
    """The question after it was answered: prices kept, buttons gone, choice shown."""
    return "\n".join(
        [
            f"{_label(f)}: at these prices,",
            *_price_lines(f.rooms, f.prices, f.currency, f.decimals, locale),
            f"you chose {room}. Saved.",
        ]
    )


def prompt(f: PromptFacts, locale: str) -> str:
    return "\n".join(
        [
            f"You asked to swap away from {f.rooms[f.your_room]}. At the suggested prices,",
            *_price_lines(f.rooms, f.prices, f.currency, f.decimals, locale),
            "which room would you rather have? I will ask a few more questions after that.",
            SHORT_CAUTION,
        ]
    )


def my_answers(f: MyAnswersFacts, locale: str) -> str:
    how = {
        "answer": "you answered",
        "rule": "worked out",
        "repeat": "same prices as before",
        "objection": "you asked to swap",
        "answer-changed": "you changed it to this",
        "set-aside": "no longer counts: changed, or its question was replaced",
    }
    rows = []
    for number, line in enumerate(f.lines, start=1):
        prices = ", ".join(
            f"{room} {money(p, f.currency, f.decimals, locale)}"
            for room, p in zip(f.rooms, line.prices, strict=True)
        )
        rows.append(f"{number}. {line.room} at {prices} ({how.get(line.how, line.how)})")
    if f.before_rent_change:
        return (
            "The latest round only moved the agreed prices to the new rent and asked nobody "
            "anything. Your answers in the agreed round it rests on (only you see this):\n"
            + "\n".join(rows)
            + "\nThat round is settled, so these can no longer be changed. If the new split "
            "is not right for you, tap swap on it while it waits for agreement; after that, "
            "an admin can start a fresh round with /again.\n" + SHORT_CAUTION
        )
    return (
        "Your answers in the latest round (only you see this):\n"
        + ("\n".join(rows) or "• none yet")
        + "\nPressed the wrong room? While the round is open, tap Change answer and the "
        "number, and pick the room you meant.\n" + SHORT_CAUTION
    )
