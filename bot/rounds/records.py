"""Rows as the engine sees them, independent of the database behind the store port.

See :class:`~bot.rounds.store_port.Store`.

All times are epoch seconds; all money is integer minor units.
"""

from __future__ import annotations

from dataclasses import dataclass

from bot.rounds.messages import Action
from bot.rounds.phases import Phase
from bot.rounds.round_settings import RoundSettings


@dataclass(frozen=True, slots=True)
class RoundRecord:
    """A round: its group, admin, phase, settings and (once asking) the saved walk."""

    id: int
    group_id: int
    admin_id: int
    phase: Phase
    settings: RoundSettings
    walk_json: str | None
    walk_rev: int
    proposal_no: int
    previous_round: int | None
    created_at: int
    updated_at: int
    #: when the retention policy deleted its answers and walk (None: kept)
    forgotten_at: int | None = None


@dataclass(frozen=True, slots=True)
class MemberRecord:
    """A member of a round; ``accepted_at`` is set once they accept the current proposal."""

    round_id: int
    user_id: int
    display_name: str
    joined_at: int
    accepted_at: int | None
    #: What the member privately said each room is roughly worth to them a month (minor
    #: units, in room order), or None. Only steers the first questions; never an answer.
    rough_values: tuple[int, ...] | None = None


@dataclass(frozen=True, slots=True)
class QuestionRecord:
    """A question sent to a member; answered once ``answered_at`` and ``room`` are set.

    ``withdrawn_at`` is set instead when the walk no longer needs the answer (it asked an idle
    member ahead of time, and the walk went another way).
    """

    round_id: int
    qid: str
    user_id: int
    prices: tuple[int, ...]
    choices: tuple[int, ...]
    asked_at: int
    answered_at: int | None
    room: int | None
    withdrawn_at: int | None = None

    @property
    def open(self) -> bool:
        """Still waiting for an answer."""
        return self.answered_at is None and self.withdrawn_at is None


@dataclass(frozen=True, slots=True)
class TokenRecord:
    """What a button token means: an action on a round, with a reference and maybe a room."""

    token: str
    round_id: int
    action: Action
    ref: str
    room: int | None


class TimerKind:
    """Timer kinds, stored as text."""

    REMINDER = "reminder"
    HOLD_UP = "hold-up"
    LAPSE = "lapse"


@dataclass(frozen=True, slots=True)
class TimerRecord:
    """Something to do at ``due_at``; ``fired_at`` is set once it has been done."""

    id: int
    round_id: int
    kind: str
    user_id: int | None
    ref: str
    due_at: int
    fired_at: int | None


class AuditKind:
    """Audit entry kinds, stored as text."""

    ROUND_CREATED = "round-created"
    CONFIGURED = "configured"
    JOINING_OPENED = "joining-opened"
    JOINED = "joined"
    LEFT = "left"
    ASKING_STARTED = "asking-started"
    QUESTION = "question"
    ANSWER = "answer"
    WITHDRAWN = "withdrawn"
    INFERRED = "inferred"
    PROPOSAL = "proposal"
    OBJECTION_STARTED = "objection-started"
    OBJECTION = "objection"
    ACCEPTED = "accepted"
    AGREEMENT = "agreement"
    CANCELLED = "cancelled"
    LAPSED = "lapsed"
    REMINDED = "reminded"
    HOLD_UP = "hold-up"
    EARLIER_CHOICE = "earlier-choice"
    ROUND_CLOSED = "round-closed"
    ROUGH_VALUES = "rough-values"
    STOPPED_AT_LIMIT = "stopped-at-limit"
    ANSWER_CHANGED = "answer-changed"
    ANSWER_SET_ASIDE = "answer-set-aside"
    SAME_SPLIT = "same-split"
    ANSWER_KEPT = "answer-kept"
    LAST_CHOICE = "last-choice"


#: The audit kinds that are a member's own answers (shown to that member only).
OWN_ANSWER_KINDS = (
    AuditKind.ANSWER,
    AuditKind.INFERRED,
    AuditKind.OBJECTION,
    AuditKind.ANSWER_CHANGED,
)
#: Audit kinds that carry or point at private answers, deleted with a finished round's
#: answers (:mod:`bot.rounds.retention`); what the group saw (created, joined, proposals,
#: acceptances, the agreement, cancellation) stays.
PRIVATE_AUDIT_KINDS = (
    AuditKind.QUESTION,
    AuditKind.ANSWER,
    AuditKind.INFERRED,
    AuditKind.OBJECTION,
    AuditKind.OBJECTION_STARTED,
    AuditKind.EARLIER_CHOICE,
    AuditKind.WITHDRAWN,
    AuditKind.REMINDED,
    AuditKind.ANSWER_CHANGED,
    AuditKind.ANSWER_SET_ASIDE,
    AuditKind.ANSWER_KEPT,
)


@dataclass(frozen=True, slots=True)
class AgreementRecord:
    """A settled round's written agreement as stored: ``facts`` is
    :func:`~bot.rounds.outbox_codec.encode_facts` JSON."""

    round_id: int
    group_id: int
    agreed_at: int
    facts: str


@dataclass(frozen=True, slots=True)
class AuditRecord:
    """One line of the audit log; ``detail`` is JSON text."""

    id: int
    round_id: int
    at: int
    kind: str
    user_id: int | None
    detail: str


class OutboxState:
    """Where an outgoing message stands, stored as text."""

    PENDING = "pending"  # committed by the engine, not yet sent (maybe claimed for sending)
    HELD = "held"  # the person has not opened a private chat with the bot yet
    SENT = "sent"
    DROPPED = "dropped"  # Telegram refused it for good (e.g. the bot was removed)


@dataclass(frozen=True, slots=True)
class OutboxRecord:
    """One outgoing message in the outbox; ``payload`` is :mod:`bot.rounds.outbox_codec` JSON."""

    id: int
    event_key: str
    seq: int
    chat_id: int
    round_id: int | None
    kind: str
    ref: str | None
    payload: str
    state: str
    message_id: int | None
