"""The round engine's error hierarchy.

Two families, because they are handled differently. A :class:`Refusal` is the user's doing
(wrong person, wrong moment, bad input): the engine rolls the transaction back, stores
nothing and answers with a message that says what to do instead. A :class:`StorageFault` is
ours (a damaged database, a bug): it propagates to the adapter, which logs it.
"""

from __future__ import annotations

from enum import Enum


class RefusalCode(Enum):
    """Why something was refused; lets the adapter choose tone and placement."""

    NOT_ALLOWED = "not-allowed"
    NOT_A_MEMBER = "not-a-member"
    NOT_YOURS = "not-yours"
    STALE = "stale"
    WRONG_PHASE = "wrong-phase"
    BAD_INPUT = "bad-input"
    NO_ROUND = "no-round"
    BUSY_GROUP = "busy-group"


class FlatpactError(Exception):
    """Base class for everything the bot side raises on purpose."""


class Refusal(FlatpactError):
    """The request cannot be carried out; ``str(self)`` tells the person what to do."""

    code = RefusalCode.BAD_INPUT

    def __init__(self, message: str, code: RefusalCode | None = None) -> None:
        super().__init__(message)
        if code is not None:
            self.code = code


class NotAllowed(Refusal):
    """The actor lacks the role the request needs (admin, member, owner of the question)."""

    code = RefusalCode.NOT_ALLOWED


class InvalidSetup(Refusal):
    """Set-up input (rent, currency, rooms, tolerance, floor) cannot be used as given."""

    code = RefusalCode.BAD_INPUT


class StaleAction(Refusal):
    """A button or question that no longer applies (answered, superseded, round closed)."""

    code = RefusalCode.STALE


class IllegalMove(Refusal):
    """The round's phase does not allow this step; the message names the phase."""

    code = RefusalCode.WRONG_PHASE


class StorageFault(FlatpactError):
    """The database holds something the engine cannot accept. A bug or damage, never a user's."""


class StorageUnavailable(StorageFault):
    """The database dropped the connection or aborted the transaction for a passing reason.

    Nothing of the transaction was kept, so the caller may run the whole transaction again;
    the engine does (:mod:`bot.rounds.retrying`), which is safe because every event carries an
    idempotency key that is committed together with its effects.
    """
