"""What the engine asks the adapter to send: plain frozen data, no wording, no markup.

Money facts are integer minor units plus a currency code; names are as people typed them.
Choices are ``(action, token)`` pairs: the adapter puts the token (12 characters) into the
button's callback data with a short prefix and sends it back in a
:class:`~bot.rounds.events.Press`. Turning an :class:`Outgoing` into text is the adapter's job
(:mod:`bot.adapter.texts`; the written agreement: :mod:`bot.rounds.agreement_document`).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from enum import Enum


@dataclass(frozen=True, slots=True)
class Recipient:
    """A group chat (``private=False``) or a person's private chat with the bot."""

    chat_id: int
    private: bool

    @classmethod
    def group(cls, chat_id: int) -> Recipient:
        return cls(chat_id, private=False)

    @classmethod
    def person(cls, user_id: int) -> Recipient:
        return cls(user_id, private=True)


class Kind(Enum):
    """What a message is about; the adapter picks wording and layout by kind."""

    DRAFT_SAVED = "draft-saved"
    JOINING_OPEN = "joining-open"
    MEMBER_JOINED = "member-joined"
    MEMBER_LEFT = "member-left"
    ASKING_STARTED = "asking-started"
    QUESTION = "question"
    PROGRESS = "progress"
    WITHDRAWN = "withdrawn"
    PROPOSAL = "proposal"
    ACCEPTED = "accepted"
    ROOM_PROMPT = "room-prompt"
    OBJECTION_NOTED = "objection-noted"
    SETTLED = "settled"
    CANCELLED = "cancelled"
    LAPSED = "lapsed"
    REMINDER = "reminder"
    HOLD_UP = "hold-up"
    MY_ANSWERS = "my-answers"
    REFUSAL = "refusal"
    EARLIER_OFFER = "earlier-offer"
    EARLIER_CHOSEN = "earlier-chosen"
    AGREEMENT = "agreement"
    STOPPED_AT_LIMIT = "stopped-at-limit"
    ROUGH_INVITE = "rough-invite"
    ROUGH_NOTED = "rough-noted"
    CHANGE_PROMPT = "change-prompt"
    ANSWER_CHANGED = "answer-changed"
    ANSWERS_SET_ASIDE = "answers-set-aside"
    SPLIT_WITHDRAWN = "split-withdrawn"
    SAME_SPLIT = "same-split"
    ANSWERS_DISAGREE = "answers-disagree"
    LAST_CHOICE = "last-choice"
    ANSWER_KEPT = "answer-kept"


class Action(Enum):
    """What pressing a button does (stored with its token)."""

    JOIN = "join"
    ANSWER = "answer"
    ACCEPT = "accept"
    OBJECT = "object"
    PREFER = "prefer"
    KEEP_EARLIER = "keep-earlier"
    ANSWER_AFRESH = "answer-afresh"
    #: pick one of your answers to change (``ref``: the stored question; ``room`` carries
    #: the answer's line number in the list, for the button's label)
    CHANGE_ANSWER = "change-answer"
    #: the room the answer should have been (``ref``: the stored question)
    CHANGE_TO = "change-to"
    #: your earlier answer was right; the objection is set aside (``ref``: proposal number)
    KEEP_ANSWER = "keep-answer"
    #: an admin ends the round after the last choice (``ref``: proposal number)
    END_ROUND = "end-round"


@dataclass(frozen=True, slots=True)
class Choice:
    """A button: ``room`` is set for answers and preferences (index into the rooms)."""

    action: Action
    token: str
    room: int | None = None


@dataclass(frozen=True, slots=True)
class RoundFacts:
    """The round as the group sees it."""

    round_id: int
    group_id: int
    phase: str
    rent: int
    currency: str
    decimals: int
    rooms: tuple[str, ...]
    tolerance: int
    floor: int
    members: tuple[str, ...]
    member_ids: tuple[int, ...] = ()
    shared: int = 0
    per_person: int = 0
    common: tuple[str, ...] = ()
    empty_allowed: bool = False
    #: Asking started: whose earlier answers are reused, and who got that by default.
    reused: tuple[str, ...] = ()
    reused_by_default: tuple[str, ...] = ()
    #: Questions go one at a time (the walk) rather than to everyone at once, round by round.
    one_by_one: bool = False
    #: When asking starts: about how many rounds to expect, and when the round lapses.
    expected_rounds: int | None = None
    lapses_at: int | None = None
    #: When a round stopped at the limit: how many questions each member could be asked.
    question_limit: int | None = None


@dataclass(frozen=True, slots=True)
class QuestionFacts:
    """A private question: at these prices (one per room), which of ``choices`` would you take?"""

    round_id: int
    question_ref: str
    rooms: tuple[str, ...]
    prices: tuple[int, ...]
    currency: str
    decimals: int
    choices: tuple[int, ...]
    number_for_member: int
    #: With the parallel search: the round this question belongs to, and about how many
    #: rounds the search expects in all (None when questions go one at a time).
    round_number: int | None = None
    expected_rounds: int | None = None


@dataclass(frozen=True, slots=True)
class ProgressFacts:
    """After an answer (private) or a step (group): how far things are."""

    round_id: int
    answers_stored: int
    answered_by_you: int
    room_taken: str | None = None
    question_ref: str | None = None


@dataclass(frozen=True, slots=True)
class DivisionLine:
    """One line of a division: who, which room, how much."""

    member: str
    user_id: int
    room_index: int
    room: str
    price: int
    shared: int = 0


@dataclass(frozen=True, slots=True)
class DivisionFacts:
    """A proposed or settled division, with the promise behind it (never anyone's answers)."""

    round_id: int
    proposal_no: int
    rent: int
    currency: str
    decimals: int
    lines: tuple[DivisionLine, ...]
    tolerance: int
    envy_bound: int
    accepted: int
    members: int
    shared_total: int = 0
    empty_rooms: tuple[str, ...] = ()
    empty_prices: tuple[int, ...] = ()
    #: Every member chose their room at exactly these prices (the strongest evidence).
    exact: bool = False
    #: A rent change: the earlier agreement's total, whose split these prices re-price by
    #: spreading the change equally over the let rooms (None for a split found by questions).
    previous_rent: int | None = None
    #: Objections are used up: agree, or an admin ends the round (no objection button).
    last_choice: bool = False


@dataclass(frozen=True, slots=True)
class PromptFacts:
    """Private follow-up to an objection: which room would you rather take at these prices?"""

    round_id: int
    proposal_no: int
    rooms: tuple[str, ...]
    prices: tuple[int, ...]
    currency: str
    decimals: int
    your_room: int


@dataclass(frozen=True, slots=True)
class WaitingFacts:
    """For the admin after the round deadline: who the round is waiting for."""

    round_id: int
    waiting_for: tuple[str, ...]
    phase: str
    since: int


@dataclass(frozen=True, slots=True)
class AnswerLine:
    """One of your own answers."""

    at: int
    prices: tuple[int, ...]
    room: str
    how: str


@dataclass(frozen=True, slots=True)
class MyAnswersFacts:
    """A member's own answers; sent only to that member."""

    round_id: int
    currency: str
    decimals: int
    rooms: tuple[str, ...]
    lines: tuple[AnswerLine, ...]
    #: the latest round only re-priced an agreement for a new rent: these are the answers of
    #: the agreed round it rests on
    before_rent_change: bool = False


@dataclass(frozen=True, slots=True)
class EarlierFacts:
    """Private, to a member who was in the previous round: reuse those answers or not?

    ``usable`` is False when the rooms changed, so earlier answers cannot be matched up;
    ``keep`` is the member's choice once made (None: not chosen, which means reuse).
    """

    round_id: int
    previous_round: int
    usable: bool
    keep: bool | None = None


@dataclass(frozen=True, slots=True)
class AgreementLine:
    """One member in the written agreement, with the answer that supports their room."""

    member: str
    user_id: int
    room_index: int
    room: str
    price: int
    shared: int
    accepted_at: int
    evidence_prices: tuple[int, ...]


@dataclass(frozen=True, slots=True)
class AgreementFacts:
    """Everything the written agreement shows; nobody's answers except each one's evidence."""

    round_id: int
    group_id: int
    settled_at: int
    rent: int
    currency: str
    decimals: int
    rooms: tuple[str, ...]
    common: tuple[str, ...]
    lines: tuple[AgreementLine, ...]
    empty_rooms: tuple[str, ...]
    empty_prices: tuple[int, ...]
    shared: int
    per_person: int
    tolerance: int
    envy_bound: int
    #: A rent change: the re-priced agreement's total and when it was agreed (else None).
    previous_rent: int | None = None
    previous_settled_at: int | None = None


@dataclass(frozen=True, slots=True)
class RoughFacts:
    """The invitation to give rough values (``values`` None), or the values as noted."""

    round_id: int
    rooms: tuple[str, ...]
    currency: str
    decimals: int
    values: tuple[int, ...] | None = None


@dataclass(frozen=True, slots=True)
class ChangeFacts:
    """A member changes one of their answers: the prompt (``new_room`` None) or the result.

    ``set_aside`` counts later answers (anyone's) whose question no longer exists after the
    change: they are kept in the log but no longer used, and their questions are asked anew
    where still needed; ``objections_set_aside`` the same for objections.
    """

    round_id: int
    rooms: tuple[str, ...]
    currency: str
    decimals: int
    prices: tuple[int, ...]
    old_room: int
    new_room: int | None = None
    set_aside: int = 0
    objections_set_aside: int = 0


@dataclass(frozen=True, slots=True)
class DisagreeFacts:
    """Private, to an objector whose objection led back to the same split: two answers
    side by side, "at these prices you took A; at (almost) the same prices you now prefer B"."""

    round_id: int
    proposal_no: int
    rooms: tuple[str, ...]
    currency: str
    decimals: int
    took_prices: tuple[int, ...]
    took_room: int
    prefer_prices: tuple[int, ...]
    prefer_room: int
    #: the earlier answer can be changed (it was a question you answered)
    changeable: bool


@dataclass(frozen=True, slots=True)
class SplitNoteFacts:
    """For the group: the split came back unchanged, was withdrawn, or this is the last choice."""

    round_id: int
    proposal_no: int
    same_as: int | None = None
    objections: int = 0
    objection_limit: int = 0


@dataclass(frozen=True, slots=True)
class RefusalFacts:
    """Why a request was refused and what to do instead."""

    code: str
    reason: str


Facts = (
    RoundFacts
    | QuestionFacts
    | ProgressFacts
    | DivisionFacts
    | PromptFacts
    | WaitingFacts
    | MyAnswersFacts
    | RefusalFacts
    | EarlierFacts
    | AgreementFacts
    | RoughFacts
    | ChangeFacts
    | DisagreeFacts
    | SplitNoteFacts
)


@dataclass(frozen=True, slots=True)
class Outgoing:
    """One message to send. ``ref`` lets the adapter report the sent message id back."""

    to: Recipient
    kind: Kind
    facts: Facts
    choices: tuple[Choice, ...] = field(default=())
    ref: str | None = None


@dataclass(frozen=True, slots=True)
class StatusFacts:
    """The round as the group sees it, with progress; ``waiting_for`` is (user id, name)."""

    round: RoundFacts
    answered: int
    waiting_for: tuple[tuple[int, str], ...]
    round_number: int | None = None
    expected_rounds: int | None = None
