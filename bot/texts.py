"""What the Telegram bot says: our own plain-English wording, amounts formatted with Babel.

Money arrives as integer minor units; Babel only formats it (the amount already has exactly
the currency's decimals, so nothing is rounded). Private messages use the person's Telegram
language for number formats where Babel knows it; groups use the configured locale.
"""

from __future__ import annotations

from decimal import Decimal

from babel import Locale, UnknownLocaleError
from babel.numbers import format_currency

from bot.messages import (
    DivisionFacts,
    Kind,
    MyAnswersFacts,
    Outgoing,
    ProgressFacts,
    PromptFacts,
    QuestionFacts,
    RefusalFacts,
    RoundFacts,
    WaitingFacts,
)
from bot.status import StatusFacts
from bot.wording import CAUTION

#: Telegram Bot API: message text is 1-4096 characters after entities parsing
#: (core.telegram.org/bots/api#sendmessage).
TEXT_LIMIT = 4096
#: Telegram Bot API: answerCallbackQuery text is 0-200 characters.
CALLBACK_TEXT_LIMIT = 200

HOW_IT_WORKS = (
    "How it works: every possible way of splitting the rent between the rooms is a price "
    "list. I lay a grid over all those price lists and walk across it, asking each of you "
    'privately: "at these prices, which room would you take?" A result known as Sperner\'s '
    "lemma guarantees that the walk ends at a price list where each of you gets the room you "
    "chose, so nobody would rather swap.\n\n"
    "This rests on two assumptions: you would take a free room rather than pay for another, "
    "and a room never becomes less attractive by getting cheaper.\n\n"
    '"Within tolerance" means the grid is fine enough that each of you chose your room at '
    "prices at most the tolerance away from the final ones: if money counts one-for-one for "
    "you, you would not pay more than the tolerance to swap with anyone."
)


def pick_locale(language_code: str | None, default: str = "en") -> str:
    """A locale Babel knows, from a Telegram ``language_code`` such as ``de`` or ``pt-br``."""
    for candidate in (language_code, default):
        if not candidate:
            continue
        try:
            return str(Locale.parse(candidate.replace("-", "_")))
        except (UnknownLocaleError, ValueError):
            continue
    return "en"


def money(minor: int, currency: str, decimals: int, locale: str) -> str:
    """``€1,234.50``: exact minor units shown in the locale's currency format."""
    amount = Decimal(minor).scaleb(-decimals)
    return str(format_currency(amount, currency, locale=locale))


def fit(text: str, limit: int = TEXT_LIMIT) -> str:
    """Cut over-long text (only ever very long name lists) so Telegram accepts it."""
    return text if len(text) <= limit else text[: limit - 1] + "…"


def render(message: Outgoing, locale: str, *, need_private_chat: tuple[str, ...] = ()) -> str:
    """The text of one engine message."""
    f = message.facts
    if isinstance(f, RefusalFacts):
        return refusal(f)
    if isinstance(f, QuestionFacts):
        return question(f, locale, reminder=message.kind is Kind.REMINDER)
    if isinstance(f, DivisionFacts):
        return division(f, message.kind, locale)
    if isinstance(f, PromptFacts):
        return prompt(f, locale)
    if isinstance(f, ProgressFacts):
        return f"Saved: you would take {f.room_taken}. Thank you, the next step is on its way."
    if isinstance(f, WaitingFacts):
        who = ", ".join(f.waiting_for) or "nobody"
        return f"Your round has been {f.phase} for a while. Still waiting for: {who}."
    if isinstance(f, MyAnswersFacts):
        return my_answers(f, locale)
    return round_text(f, message.kind, locale, need_private_chat)


def refusal(f: RefusalFacts) -> str:
    return f"Not done: {f.reason}."


def _price_lines(
    rooms: tuple[str, ...], prices: tuple[int, ...], currency: str, decimals: int, locale: str
) -> list[str]:
    return [
        f"• {room}: {money(p, currency, decimals, locale)}"
        for room, p in zip(rooms, prices, strict=True)
    ]


def question(f: QuestionFacts, locale: str, *, reminder: bool) -> str:
    head = "Reminder, this one is still open.\n" if reminder else ""
    offered = ", ".join(f.rooms[i] for i in f.choices)
    return "\n".join(
        [
            f"{head}Question {f.number_for_member}: if the rent were split like this,",
            *_price_lines(f.rooms, f.prices, f.currency, f.decimals, locale),
            f"which room would you take? (You can pick: {offered}.)",
        ]
    )


def answered_question(f: QuestionFacts, room: str, locale: str) -> str:
    """The question after it was answered: prices kept, buttons gone, choice shown."""
    return "\n".join(
        [
            f"Question {f.number_for_member}: at these prices,",
            *_price_lines(f.rooms, f.prices, f.currency, f.decimals, locale),
            f"you chose {room}. Saved.",
        ]
    )


def division(f: DivisionFacts, kind: Kind, locale: str) -> str:
    head = {
        Kind.SETTLED: "Everyone agreed. The split:",
        Kind.ACCEPTED: f"Suggested split ({f.accepted} of {f.members} agreed so far):",
        Kind.REMINDER: "Reminder: please agree or ask to swap. The suggested split:",
    }.get(kind, "Suggested split:")
    lines = [
        f"• {line.member}: {line.room}, {money(line.price, f.currency, f.decimals, locale)}"
        for line in f.lines
    ]
    total = sum(line.price for line in f.lines)
    check = "matches" if total == f.rent else "DOES NOT match"
    tolerance = money(f.tolerance, f.currency, f.decimals, locale)
    return "\n".join(
        [
            head,
            *lines,
            f"Total {money(total, f.currency, f.decimals, locale)}, which {check} the rent of "
            f"{money(f.rent, f.currency, f.decimals, locale)}.",
            f"Each of you chose your room at prices within {tolerance} of these.",
            "",
            CAUTION,
        ]
    )


def prompt(f: PromptFacts, locale: str) -> str:
    return "\n".join(
        [
            f"You asked to swap away from {f.rooms[f.your_room]}. At the suggested prices,",
            *_price_lines(f.rooms, f.prices, f.currency, f.decimals, locale),
            "which room would you rather have? I will ask a few more questions after that.",
        ]
    )


def my_answers(f: MyAnswersFacts, locale: str) -> str:
    how = {"answer": "you answered", "rule": "worked out", "repeat": "same prices as before"}
    rows = []
    for line in f.lines:
        prices = ", ".join(
            f"{room} {money(p, f.currency, f.decimals, locale)}"
            for room, p in zip(f.rooms, line.prices, strict=True)
        )
        rows.append(f"• {line.room} at {prices} ({how.get(line.how, line.how)})")
    return "Your answers in the latest round (only you see this):\n" + (
        "\n".join(rows) or "• none yet"
    )


def round_text(
    f: RoundFacts, kind: Kind, locale: str, need_private_chat: tuple[str, ...] = ()
) -> str:
    headline = {
        Kind.DRAFT_SAVED: "New round set up.",
        Kind.JOINING_OPEN: 'The round is open: tap "Count me in" to join.',
        Kind.MEMBER_JOINED: "Someone joined the round.",
        Kind.MEMBER_LEFT: "Someone left the round.",
        Kind.ASKING_STARTED: "Everyone is in. I am sending each of you questions privately.",
        Kind.OBJECTION_NOTED: "Someone would rather swap at those prices, so I will ask a "
        "few more questions privately.",
        Kind.CANCELLED: "The round was cancelled. Nothing was agreed.",
        Kind.LAPSED: "The round ran out of time and is closed. Nothing was agreed.",
    }.get(kind, "Round update.")
    rent = money(f.rent, f.currency, f.decimals, locale)
    lines = [
        headline,
        f"Rent: {rent}. Rooms: {', '.join(f.rooms)}.",
        f"Tolerance: {money(f.tolerance, f.currency, f.decimals, locale)}."
        + (
            f" Lowest price per room: {money(f.floor, f.currency, f.decimals, locale)}."
            if f.floor
            else ""
        ),
        f"Members ({len(f.members)} of {len(f.rooms)}): {', '.join(f.members) or 'nobody yet'}.",
    ]
    if need_private_chat and kind in (Kind.JOINING_OPEN, Kind.MEMBER_JOINED, Kind.ASKING_STARTED):
        lines.append(
            f"Still to open a private chat with me (button below): {', '.join(need_private_chat)}."
        )
    if kind in (Kind.MEMBER_JOINED, Kind.JOINING_OPEN) and len(f.members) == len(f.rooms):
        lines.append("Every room has a member now: the admin can send /begin.")
    return "\n".join(lines)


def board(status: StatusFacts, locale: str) -> str:
    """The group's progress line: counts and who is awaited, never anyone's answers."""
    r = status.round
    waiting = ", ".join(name for _, name in status.waiting_for) or "nobody"
    phase = {
        "asking": "Questions are going round privately.",
        "proposed": "A split is proposed; waiting for everyone to agree.",
        "settled": "Settled.",
    }.get(r.phase, f"The round is {r.phase}.")
    return (
        f"{phase}\nRent {money(r.rent, r.currency, r.decimals, locale)}; rooms: "
        f"{', '.join(r.rooms)}.\nQuestions answered so far: {status.answered}. "
        f"Waiting for: {waiting}."
    )


def needs_private_chat(name: str, link: str) -> str:
    return (
        f"{name}, I cannot write to you privately yet, and your questions are waiting. "
        f"Open {link} and press Start; I will send them right away."
    )


COMMANDS: tuple[tuple[str, str], ...] = (
    ("newround", "Set up a round: /newround 1850 EUR; Loft, Attic, Bay room"),
    ("begin", "Start the private questions once every room has a member"),
    ("status", "Where the round stands and who it is waiting for"),
    ("leave", "Leave the round before the questions start"),
    ("myanswers", "Get your own answers, privately"),
    ("cancelround", "Stop the open round (admin)"),
    ("again", "Run the last settled round again with the same settings"),
    ("help", "What I do and how it works"),
)


def help_text() -> str:
    commands = "\n".join(f"/{name} - {description}" for name, description in COMMANDS)
    return (
        "I help flatmates agree who takes which room and how the rent is split, so that "
        "nobody would rather swap.\n\n"
        "1. An admin sends /newround with the rent and the rooms, e.g.\n"
        "   /newround 1850.00 EUR; Loft, Attic, Bay room; tolerance 5; floor 0\n"
        "   or just /newround and I will ask.\n"
        '2. Everyone taps "Count me in" and opens a private chat with me.\n'
        "3. The admin sends /begin. I ask each of you a few questions privately.\n"
        "4. I post a suggested split; everyone agrees or asks to swap.\n\n"
        f"{commands}\n\n{HOW_IT_WORKS}\n\n{CAUTION}"
    )
