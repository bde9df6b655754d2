"""What the Telegram bot says: our own plain-English wording, amounts formatted with Babel.

Money arrives as integer minor units; Babel only formats it (the amount already has exactly
the currency's decimals, so nothing is rounded). Private messages use the person's Telegram
language for number formats where Babel knows it; groups use the configured locale.
"""

from __future__ import annotations

from decimal import Decimal

from babel import Locale, UnknownLocaleError
from babel.numbers import format_currency

from bot.adapter.change_texts import change_text, disagree_text, split_note
from bot.adapter.private_texts import (
    WITHDRAWN_NOTE,
    earlier_offer,
    my_answers,
    prompt,
    question,
    rough,
)
from bot.adapter.repriced_texts import repriced_words
from bot.rounds.agreement_document import Document, html_document, markdown
from bot.rounds.agreement_document import when as agreement_time
from bot.rounds.caution import CAUTION, SHORT_CAUTION
from bot.rounds.messages import (
    AgreementFacts,
    ChangeFacts,
    DisagreeFacts,
    DivisionFacts,
    EarlierFacts,
    Kind,
    MyAnswersFacts,
    Outgoing,
    ProgressFacts,
    PromptFacts,
    QuestionFacts,
    RefusalFacts,
    RoughFacts,
    RoundFacts,
    SplitNoteFacts,
    StatusFacts,
    WaitingFacts,
)
from bot.rounds.phases import Phase

#: Telegram Bot API: message text is 1-4096 characters after entities parsing
#: (core.telegram.org/bots/api#sendmessage).
TEXT_LIMIT = 4096
#: Telegram Bot API: answerCallbackQuery text is 0-200 characters.
CALLBACK_TEXT_LIMIT = 200


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
    if isinstance(f, ProgressFacts) and message.kind is Kind.WITHDRAWN:
        return WITHDRAWN_NOTE
    if isinstance(f, ProgressFacts):
        return f"Saved: you would take {f.room_taken}. Thank you, the next step is on its way."
    if isinstance(f, WaitingFacts):
        who = ", ".join(f.waiting_for) or "nobody"
        return (
            f"Your round has been {Phase(f.phase).in_words} for a while. Still waiting for: {who}."
        )
    if isinstance(f, MyAnswersFacts):
        return my_answers(f, locale)
    if isinstance(f, EarlierFacts):
        return earlier_offer(f)
    if isinstance(f, RoughFacts):
        return rough(f, locale)
    if isinstance(f, AgreementFacts):
        # Sent as files (agreement_files); as text only if sent like any other message.
        return markdown(f).text
    if isinstance(f, ChangeFacts):
        return change_text(f, message.kind, locale)
    if isinstance(f, DisagreeFacts):
        return disagree_text(f, locale)
    if isinstance(f, SplitNoteFacts):
        return split_note(f, message.kind)
    return round_text(f, message.kind, locale, need_private_chat)


def agreement_caption(f: AgreementFacts, locale: str) -> str:
    """The caption of the written agreement's file."""
    return (
        f"The written agreement, agreed {agreement_time(f.settled_at)}: "
        f"total {money(f.rent, f.currency, f.decimals, locale)}. Keep it with your papers. "
        f"{SHORT_CAUTION}"
    )


def agreement_files(f: AgreementFacts) -> tuple[Document, Document]:
    """The agreement as Markdown (easy to read anywhere) and HTML (easy to print)."""
    return markdown(f), html_document(f)


def history(agreements: list[AgreementFacts], locale: str) -> str:
    """The group's past agreements, newest first: when, the total, who took which room."""
    if not agreements:
        return (
            "No agreements yet in this group. Once everyone has agreed to a split, it is "
            "listed here."
        )
    blocks = []
    for f in reversed(agreements):
        rooms = "; ".join(
            f"{line.member}: {line.room} "
            f"({money(line.price + line.shared, f.currency, f.decimals, locale)})"
            for line in f.lines
        )
        empty = f" Empty: {', '.join(f.empty_rooms)}." if f.empty_rooms else ""
        repriced = (
            f" Rent change from {money(f.previous_rent, f.currency, f.decimals, locale)}."
            if f.previous_rent is not None
            else ""
        )
        blocks.append(
            f"• {agreement_time(f.settled_at)}, total "
            f"{money(f.rent, f.currency, f.decimals, locale)}: {rooms}.{empty}{repriced}"
        )
    return "Agreements of this group, newest first:\n" + "\n".join(blocks) + f"\n{SHORT_CAUTION}"


def refusal(f: RefusalFacts) -> str:
    return f"Not done: {f.reason}."


def division(f: DivisionFacts, kind: Kind, locale: str) -> str:
    head = {
        Kind.SETTLED: "Everyone agreed. The split:",
        Kind.ACCEPTED: f"Suggested split ({f.accepted} of {f.members} agreed so far):",
        Kind.REMINDER: "Reminder: please agree or ask to swap. The suggested split:",
    }.get(kind, "Suggested split:")

    def cash(minor: int) -> str:
        return money(minor, f.currency, f.decimals, locale)

    lines = [
        f"• {line.member}: {line.room}, {cash(line.price)}"
        + (
            f" + {cash(line.shared)} shared = {cash(line.price + line.shared)}"
            if f.shared_total
            else ""
        )
        for line in f.lines
    ]
    lines += [
        f"• {room} stays empty; nobody would rather have it at {cash(price)}."
        for room, price in zip(f.empty_rooms, f.empty_prices, strict=True)
    ]
    total = sum(line.price + line.shared for line in f.lines)
    check = "matches" if total == f.rent else "DOES NOT match"
    if f.previous_rent is not None:
        why = repriced_words(f, cash)
    elif f.exact:
        why = ["Each of you chose your room at exactly these prices."]
    else:
        why = [f"Each of you chose your room at prices within {cash(f.tolerance)} of these."]
    return "\n".join(
        [
            head,
            *lines,
            f"Total {cash(total)}, which {check} the rent of {cash(f.rent)}.",
            *why,
            *(
                ["Objections are used up in this round: agree, or an admin ends the round."]
                if f.last_choice
                else []
            ),
            "",
            CAUTION,
        ]
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
        Kind.STOPPED_AT_LIMIT: "This round stops here: it would have asked some of you more "
        f"than {f.question_limit} questions without a split everyone chose. Nothing was "
        "agreed. An admin can start again with /again, perhaps with a larger tolerance.",
    }.get(kind, "Round update.")
    if kind is Kind.OBJECTION_NOTED:  # one line: the settings are on the status message
        return headline
    lines = [headline, *_settings_lines(f, locale)]
    if kind is Kind.ASKING_STARTED:
        lines += _what_to_expect(f)
    if f.reused:
        lines.append(f"Earlier answers reused for: {', '.join(f.reused)}.")
    if f.reused_by_default:
        lines.append(
            f"({', '.join(f.reused_by_default)} did not choose, so their earlier answers "
            "are reused.)"
        )
    if need_private_chat and kind in (Kind.JOINING_OPEN, Kind.MEMBER_JOINED, Kind.ASKING_STARTED):
        lines.append(
            f"Still to open a private chat with me (button below): {', '.join(need_private_chat)}."
        )
    if kind in (Kind.MEMBER_JOINED, Kind.JOINING_OPEN) and len(f.members) == len(f.rooms):
        lines.append("Every room has a member now: the admin can send /begin.")
    elif kind is Kind.MEMBER_JOINED and f.empty_allowed and len(f.members) >= 2:
        lines.append("Rooms may stay empty, so the admin can send /begin whenever all are in.")
    return "\n".join(lines)


def _settings_lines(f: RoundFacts, locale: str) -> list[str]:
    def cash(minor: int) -> str:
        return money(minor, f.currency, f.decimals, locale)

    lines = [
        f"Total per month: {cash(f.rent)}. Rooms: {', '.join(f.rooms)}.",
        f"Tolerance: {cash(f.tolerance)}."
        + (f" Lowest price per room: {cash(f.floor)}." if f.floor else ""),
    ]
    if f.shared or f.per_person:
        lines.append(
            f"Shared costs: {cash(f.shared)} split evenly, plus {cash(f.per_person)} per "
            "person; the rest is split by rooms."
        )
    if f.common:
        lines.append(f"Not let (common space or storage): {', '.join(f.common)}.")
    if f.empty_allowed:
        lines.append(
            "Rooms may stay empty: with fewer members than rooms, the method decides which."
        )
    if f.one_by_one:
        lines.append("Questions go to one of you at a time.")
    lines.append(
        f"Members ({len(f.members)} of {len(f.rooms)}): {', '.join(f.members) or 'nobody yet'}."
    )
    return lines


def _what_to_expect(f: RoundFacts, *, estimate: bool = True) -> list[str]:
    """Said when the questions start, and kept on the live status message afterwards: how it
    goes, how long (``estimate``; the live line counts rounds itself), and the assumptions."""
    if f.one_by_one:
        how = "I ask one of you at a time, privately, until the prices settle."
    elif f.expected_rounds is not None and estimate:
        how = (
            "Each round, all of you get one private question at the same time; expect "
            f"about {f.expected_rounds} rounds."
        )
    else:
        how = "Each round, all of you get one private question at the same time."
    lines = [
        how,
        "I assume that you would take a free room rather than pay for another, that a room "
        "never gets less attractive by getting cheaper, and, to choose good questions, that "
        "money counts one-for-one for you.",
    ]
    if f.lapses_at is not None:
        lines.append(f"If no split is agreed by {agreement_time(f.lapses_at)}, the round closes.")
    return lines


def board(status: StatusFacts, locale: str, started: RoundFacts | None = None) -> str:
    """The group's progress line: counts and who is awaited, never anyone's answers.

    On the live status message (``started``: what the start of asking said) it keeps how the
    questions go, the assumptions and, while the round runs, the date it would lapse.
    """
    progress = _progress(status, locale)
    if started is None:
        return progress
    if status.round.phase in ("asking", "proposed"):
        return "\n".join([progress, *_what_to_expect(started, estimate=False)])
    assumptions = _what_to_expect(started)[1]
    return "\n".join([progress, assumptions])


def _progress(status: StatusFacts, locale: str) -> str:
    r = status.round
    waiting = ", ".join(name for _, name in status.waiting_for) or "nobody"
    if r.phase == "asking" and status.round_number is not None:
        about = (
            f" of about {status.expected_rounds}"
            if status.expected_rounds and status.expected_rounds > status.round_number
            else ""
        )
        return (
            f"Private questions, round {status.round_number}{about}.\nRent "
            f"{money(r.rent, r.currency, r.decimals, locale)}; rooms: {', '.join(r.rooms)}.\n"
            f"Answers so far: {status.answered}. Waiting for: {waiting}."
        )
    phase = {
        "asking": "Questions are going round privately.",
        "proposed": "A split is proposed; waiting for everyone to agree.",
        "settled": "Done: everyone agreed to the split.",
    }.get(r.phase, f"The round is {Phase(r.phase).in_words}.")
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
    ("myanswers", "Get your own answers, privately, and change one you misclicked"),
    ("nextround", "Ask the next round now with the answers in (admin)"),
    ("cancelround", "Stop the open round (admin)"),
    ("adjust", "Change the settings before the questions start (admin)"),
    ("again", "Run the last agreed round again with the same people and settings"),
    ("changeover", "Someone moved out or in: new round, same rooms and rent, all join again"),
    ("agreements", "List this group's past agreements"),
    ("newrent", "The rent changed: re-price the last agreement, everyone confirms (admin)"),
    ("help", "What I do and how it works"),
)
