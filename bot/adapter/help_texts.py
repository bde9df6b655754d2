"""Help texts: the short /help, the admin's options (/help setup) and how the method works.

Kept apart from the rest of the wording because they are read as a whole, by people who are
deciding whether to trust the method, and change together when an option or a step changes.
"""

from __future__ import annotations

from bot.rounds.caution import CAUTION, SHORT_CAUTION

HOW_IT_WORKS = (
    "How it works: every way of splitting the rent between the rooms is a price list. In "
    'each round I show all of you the same price list, privately, and ask: "at these prices, '
    'which room would you take?" When you all pick different rooms, that price list is the '
    "split: each of you chose your room at exactly those prices, so nobody would rather swap. "
    "Otherwise I learn from your answers where to ask next. If that takes unusually long, I "
    "switch to a walk across a grid of price lists, one question at a time, which a result "
    "known as Sperner's lemma guarantees will end at a split where each of you gets the room "
    "you chose.\n\n"
    "This rests on two assumptions: you would take a free room rather than pay for another, "
    "and a room never becomes less attractive by getting cheaper. To choose good questions I "
    "also assume that money counts one-for-one for you; the split itself does not rely on "
    "it.\n\n"
    '"Within tolerance" (for a split found by the walk) means each of you chose your room at '
    "prices at most the tolerance away from the final ones: if money counts one-for-one for "
    "you, you would not pay more than the tolerance to swap with anyone.\n\n"
    "Asking to swap is a new answer too, and I ask again. If the answers lead back to a split "
    "you have already seen, I do not post it again: I show the one who asked their two "
    "answers side by side, to keep the earlier one or change it. After two such returns, or "
    "four swaps asked in all, the group chooses: agree to the best split found, or an admin "
    "ends the round."
)


#: One line per set-up option, said where the options are shown (``/help setup``).
SETUP_HELP: tuple[tuple[str, str], ...] = (
    ("tolerance 1.00", "the most anyone could still prefer a swap, in money (default 1.00)"),
    (
        "floor 0",
        "the lowest price a room can get; below zero means the others pay you to take it",
    ),
    ("shared 300", "a part of the rent split evenly before the rooms are priced"),
    ("per person 20", "a fixed amount each (bills, say) on top of the room"),
    ("not let Box room", "a room kept out of the round (common space, storage)"),
    ("empty rooms yes", "fewer members than rooms: the method decides which stay empty"),
    ("one by one yes", "questions to one of you at a time instead of everyone at once"),
)


def help_text(topic: str = "") -> str:
    """Short help for the person asking; ``/help setup`` for the admin's options, ``/help
    how`` for how the method works."""
    if topic.strip().casefold() == "how":
        return f"{HOW_IT_WORKS}\n\n{CAUTION}"
    if topic.strip().casefold() == "setup":
        options = "\n".join(f"; {option} - {meaning}" for option, meaning in SETUP_HELP)
        return (
            "Setting up: /newround <rent with currency>; <rooms, separated by commas>, then "
            "any of these, each after a semicolon:\n"
            f"{options}\n"
            "Example: /newround 1850.00 EUR; Loft, Attic, Bay room; tolerance 5\n"
            "Before /begin, /adjust changes any of them, e.g. /adjust shared 300.\n"
            "Later, when the total rent changes: /newrent 1900.00 re-prices the last agreement "
            "(same people and rooms; the change spread equally over the rooms) and everyone "
            "confirms it again. If someone moved out or in, use /changeover instead."
        )
    return (
        "I help flatmates agree who takes which room and how the rent is split, so that "
        "nobody would rather swap.\n"
        "• Admin: /newround 1850.00 EUR; Loft, Attic, Bay room (options: /help setup), then "
        "/begin once everyone is in.\n"
        '• Everyone: tap "Count me in", open the private chat with me, answer each round\'s '
        "question there, then agree to the split or ask to swap.\n"
        '• Pressed the wrong room? Tap "I meant another room" on the answered question, or '
        "/myanswers (your answers, each with a button to change it). /status shows where the "
        "round is; /help how explains the method.\n"
        f"{SHORT_CAUTION}"
    )
