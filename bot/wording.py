"""Plain-text wording for outgoing messages (no markup; the adapter adds buttons and layout).

Our own words throughout. The proposal and the settlement always carry the caution that a
division is a suggestion: money can hurt people, and the lease and local tenancy law come first.
"""

from __future__ import annotations

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
from solver.money import format_minor

CAUTION = (
    "This split is a suggestion worked out from your answers, not legal or financial advice. "
    "Your lease and local tenancy law come first; if they say otherwise, follow them."
)


def money(amount: int, currency: str, decimals: int) -> str:
    """``1234.50 EUR``: exact digits from minor units, nothing rounded."""
    return f"{format_minor(amount, decimals)} {currency}"


def render(message: Outgoing) -> str:
    """The message as plain text."""
    f = message.facts
    if isinstance(f, RefusalFacts):
        return f"Sorry, not possible: {f.reason}."
    if isinstance(f, QuestionFacts):
        return _question(f, reminder=message.kind is Kind.REMINDER)
    if isinstance(f, DivisionFacts):
        return _division(f, message.kind)
    if isinstance(f, PromptFacts):
        lines = [
            f"{room}: {money(p, f.currency, f.decimals)}"
            for room, p in zip(f.rooms, f.prices, strict=True)
        ]
        return "At these prices, which room would you rather have?\n" + "\n".join(lines)
    if isinstance(f, ProgressFacts):
        return f"Stored: you picked {f.room_taken}. Your answers so far: {f.answered_by_you}."
    if isinstance(f, WaitingFacts):
        who = ", ".join(f.waiting_for) or "nobody"
        return f"The round is still {f.phase}; waiting for: {who}."
    if isinstance(f, MyAnswersFacts):
        rows = [
            f"- {line.room} at {', '.join(format_minor(p, f.decimals) for p in line.prices)}"
            f" ({line.how})"
            for line in f.lines
        ]
        return "Your answers (only you see these):\n" + ("\n".join(rows) or "- none yet")
    return _round(f, message.kind)


def _question(f: QuestionFacts, *, reminder: bool) -> str:
    head = "Reminder - still open: " if reminder else ""
    lines = [
        f"{f.rooms[i]}: {money(p, f.currency, f.decimals)}"
        for i, p in enumerate(f.prices)
        if i in f.choices
    ]
    return f"{head}Question {f.number_for_member}. If the rent were split like this, " + (
        "which room would you take?\n" + "\n".join(lines)
    )


def _division(f: DivisionFacts, kind: Kind) -> str:
    lines = [
        f"{line.member}: {line.room}, {money(line.price, f.currency, f.decimals)}"
        for line in f.lines
    ]
    total = money(sum(line.price for line in f.lines), f.currency, f.decimals)
    head = {
        Kind.SETTLED: "Agreed by everyone:",
        Kind.ACCEPTED: f"Accepted by {f.accepted} of {f.members}:",
    }.get(kind, "Suggested division:")
    promise = (
        f"Each of you chose your room at prices within "
        f"{money(f.tolerance, f.currency, f.decimals)} of these."
    )
    return "\n".join([head, *lines, f"Total: {total}", promise, CAUTION])


def _round(f: RoundFacts, kind: Kind) -> str:
    rent = money(f.rent, f.currency, f.decimals)
    headline = {
        Kind.DRAFT_SAVED: "Round drafted",
        Kind.JOINING_OPEN: "Round open for joining",
        Kind.MEMBER_JOINED: "Someone joined",
        Kind.MEMBER_LEFT: "Someone left",
        Kind.ASKING_STARTED: "Questions are on their way, privately",
        Kind.OBJECTION_NOTED: "A member would rather have another room at those prices; "
        "more questions follow",
        Kind.CANCELLED: "Round cancelled",
        Kind.LAPSED: "Round ran out of time",
    }.get(kind, "Round")
    members = ", ".join(f.members) or "nobody yet"
    return (
        f"{headline}. Rent {rent}; rooms: {', '.join(f.rooms)}; "
        f"members ({len(f.members)} of {len(f.rooms)}): {members}."
    )
