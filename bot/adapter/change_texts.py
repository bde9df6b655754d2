"""What the bot says about changed answers and objections that changed nothing.

Private texts (a change, answers set aside, two answers that disagree) and the group's short
notes (the split came back unchanged, was withdrawn, or the last choice). The group notes
never show the split again: it is still on screen above, under its number.
"""

from __future__ import annotations

from bot.adapter.private_texts import money
from bot.rounds.caution import SHORT_CAUTION
from bot.rounds.messages import ChangeFacts, DisagreeFacts, Kind, SplitNoteFacts


def _prices(
    rooms: tuple[str, ...], prices: tuple[int, ...], f: ChangeFacts | DisagreeFacts, locale: str
) -> str:
    return ", ".join(
        f"{room} {money(p, f.currency, f.decimals, locale)}"
        for room, p in zip(rooms, prices, strict=True)
    )


def change_text(f: ChangeFacts, kind: Kind, locale: str) -> str:
    """Private: which room should it have been; the change made; answers set aside."""
    if kind is Kind.ANSWERS_SET_ASIDE:
        return (
            f"Someone changed an earlier answer, so {f.set_aside} of your later answers went "
            "to questions that no longer exist. They stay in the round's log but no longer "
            "count; where the round still needs to know, you get a new question."
        )
    at = _prices(f.rooms, f.prices, f, locale)
    if f.new_room is None:
        return (
            f"At {at} you chose {f.rooms[f.old_room]}. Which room should it have been? "
            "I rebuild the questions from that answer on: answers to questions that stay the "
            "same are kept, and only what changes is asked again."
        )
    lines = [
        f"Changed: at {at} you would take {f.rooms[f.new_room]} "
        f"(before: {f.rooms[f.old_room]}). Stored, and noted in the round's log."
    ]
    if f.set_aside:
        lines.append(
            f"{f.set_aside} later answer(s) went to questions that no longer exist after this "
            "change; they stay in the log but no longer count, and new questions follow "
            "where needed."
        )
    if f.objections_set_aside:
        lines.append("An objection to a split that this change undid no longer counts either.")
    return "\n".join(lines)


def disagree_text(f: DisagreeFacts, locale: str) -> str:
    """Private, to the objector: the two answers side by side, and which is right."""
    same = f.took_prices == f.prefer_prices
    lines = [
        "Your answers point different ways, so the questions led back to the same split:",
        f"• at {_prices(f.rooms, f.took_prices, f, locale)} you took {f.rooms[f.took_room]};",
        f"• at {'the same prices' if same else 'almost the same prices, '}"
        + ("" if same else _prices(f.rooms, f.prefer_prices, f, locale))
        + f" you said you would rather have {f.rooms[f.prefer_room]}.",
        "Which is right?",
    ]
    if not f.changeable:
        lines.append(
            f"(Your answer for {f.rooms[f.took_room]} was worked out from other answers, so "
            "it cannot be changed here; /myanswers lists the answers you can change.)"
        )
    lines.append(SHORT_CAUTION)
    return "\n".join(lines)


def split_note(f: SplitNoteFacts, kind: Kind) -> str:
    """For the group: never the split again, only what happened to it and what to do."""
    if kind is Kind.SPLIT_WITHDRAWN:
        return (
            f"Split no. {f.proposal_no} is withdrawn: a member changed an earlier answer. "
            "I will ask a few more questions privately."
        )
    if kind is Kind.ANSWER_KEPT:
        return (
            "Noted: your earlier answer stands and your objection is set aside. The split in "
            "the group chat stands; agree to it there."
        )
    if kind is Kind.LAST_CHOICE:
        return (
            f"The answers lead back to split no. {f.same_as} above, unchanged, and objections "
            "are used up for this round. Your choice now: agree to that split, the best "
            "found (tap Agree), or an admin ends the round without an agreement (End the "
            f"round). It stands as split no. {f.proposal_no}."
        )
    return (
        f"The answers led back to split no. {f.same_as} above: same rooms, same prices, so "
        f"I am not posting it again. It stands as split no. {f.proposal_no}: agree, or ask "
        f"to swap, below. Objections so far: {f.objections} (after {f.objection_limit}, or "
        "after answers lead back twice, the group gets a last choice)."
    )
