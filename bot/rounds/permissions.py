"""Who may do what.

Each check raises a :class:`~bot.rounds.errors.Refusal` saying who can instead.
"""

from __future__ import annotations

from bot.rounds.errors import NotAllowed, RefusalCode
from bot.rounds.events import Actor
from bot.rounds.records import MemberRecord, RoundRecord


def is_round_admin(record: RoundRecord, actor: Actor) -> bool:
    """The person who started the round, or any administrator of the group chat."""
    return actor.user_id == record.admin_id or actor.is_chat_admin


def require_admin(record: RoundRecord, actor: Actor, doing: str) -> None:
    if not is_round_admin(record, actor):
        raise NotAllowed(
            f"only the person who started this round or a group admin can {doing}; ask one of them"
        )


def require_may_start(only_admins_start: bool, actor: Actor) -> None:
    """With the group's option set, only the chat's admins start rounds (and so run them)."""
    if only_admins_start and not actor.is_chat_admin:
        raise NotAllowed(
            "in this group only the group's admins can start a round; ask one of them to "
            "send /newround"
        )


def require_member(members: list[MemberRecord], actor: Actor) -> MemberRecord:
    for member in members:
        if member.user_id == actor.user_id:
            return member
    raise NotAllowed(
        "you are not a member of this round; only its members can answer and vote",
        RefusalCode.NOT_A_MEMBER,
    )
