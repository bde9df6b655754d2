"""What the adapter tells the engine: one frozen dataclass per kind of incoming event.

Every event carries ``key``, a string unique per delivery source (a Telegram update id, a
callback query id). The engine stores processed keys in the same transaction as the effect,
so a redelivered event changes nothing and produces no messages.

Buttons are not interpreted by the adapter: every press arrives as :class:`Press` with the
opaque token the engine handed out, and the engine looks the token up in the database.
"""

from __future__ import annotations

from dataclasses import dataclass

from bot.rounds.setup_input import RentInput, SetupInput, TypedAmount


@dataclass(frozen=True, slots=True)
class Actor:
    """The person behind an event; ``is_chat_admin`` comes from the chat, via the adapter."""

    user_id: int
    display_name: str
    is_chat_admin: bool = False


@dataclass(frozen=True, slots=True)
class Configure:
    """Create a draft round in ``group_id`` or change the open draft's settings.

    Creating needs the rent with its currency and the rooms; changing needs only the fields
    to change. The input was parsed where it arrived; the engine checks it against the round.
    """

    key: str
    group_id: int
    actor: Actor
    setup: SetupInput
    #: a new round (``/newround``): refused if the group already has one past drafting
    fresh: bool = False
    #: the same command also opens the round for joining: the group is told once, by the
    #: open round's message, not first by a draft's (a quieter group chat)
    open_now: bool = False


@dataclass(frozen=True, slots=True)
class OpenJoining:
    """The admin is done setting up; members may join."""

    key: str
    group_id: int
    actor: Actor


@dataclass(frozen=True, slots=True)
class Join:
    """``actor`` joins the open round of ``group_id`` (the adapter may also send a Press)."""

    key: str
    group_id: int
    actor: Actor


@dataclass(frozen=True, slots=True)
class Leave:
    """``actor`` leaves the round while members are still gathering."""

    key: str
    group_id: int
    actor: Actor


@dataclass(frozen=True, slots=True)
class BeginAsking:
    """The admin starts the questions; needs one member per room unless empties are allowed."""

    key: str
    group_id: int
    actor: Actor


@dataclass(frozen=True, slots=True)
class Press:
    """A button was pressed; ``token`` is the engine's own, checked against the database."""

    key: str
    actor: Actor
    token: str


@dataclass(frozen=True, slots=True)
class RoughValues:
    """A member, privately, says roughly what each room is worth to them a month.

    ``amounts`` were parsed where they arrived (in room order); ``None`` clears them.
    """

    key: str
    actor: Actor
    amounts: tuple[TypedAmount, ...] | None


@dataclass(frozen=True, slots=True)
class NextRound:
    """The admin moves on with the answers in: whoever has not answered keeps their question."""

    key: str
    group_id: int
    actor: Actor


@dataclass(frozen=True, slots=True)
class Cancel:
    """The admin (or a chat administrator) stops the open round."""

    key: str
    group_id: int
    actor: Actor


@dataclass(frozen=True, slots=True)
class Rerun:
    """Start a new draft from the group's settled round; ``keep_members`` copies its members.

    Without ``keep_members`` (someone moved out or in) everyone joins again with the join
    button; whoever was in the settled round is offered to reuse their earlier answers.
    """

    key: str
    group_id: int
    actor: Actor
    keep_members: bool = True


@dataclass(frozen=True, slots=True)
class ShowMyAnswers:
    """``actor`` asks, privately, for their own answers in the group's latest round."""

    key: str
    group_id: int
    actor: Actor


@dataclass(frozen=True, slots=True)
class MoveGroup:
    """Telegram upgraded ``old_group_id`` to a supergroup; its rounds continue under the new id."""

    key: str
    old_group_id: int
    new_group_id: int


@dataclass(frozen=True, slots=True)
class Tick:
    """The periodic wake-up: fire every timer due at ``now`` (epoch seconds)."""

    key: str
    now: int


@dataclass(frozen=True, slots=True)
class ChangeRent:
    """The total rent changed: re-price the group's last agreement (same members and rooms).

    ``rent`` was parsed where it arrived, in the group's amount format; the engine checks it
    against the agreement's currency. See :mod:`bot.rounds.rent_change`.
    """

    key: str
    group_id: int
    actor: Actor
    rent: RentInput
    #: the group's locale: how the amount was read, and how refusals show amounts
    locale: str = "en"


Event = (
    Configure
    | OpenJoining
    | Join
    | Leave
    | BeginAsking
    | Press
    | Cancel
    | NextRound
    | RoughValues
    | Rerun
    | ShowMyAnswers
    | MoveGroup
    | Tick
    | ChangeRent
)
