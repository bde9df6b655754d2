"""What the group reads about a rent change: where the new prices come from, and on what
assumption the split stays envy-free (see :mod:`bot.rounds.repricing`).

Said with every showing of a re-priced split (the proposal, its reminders, the settlement),
in place of the line about answers: nobody chose their room at these exact prices.
"""

from __future__ import annotations

from collections.abc import Callable

from bot.rounds.messages import DivisionFacts


def repriced_words(f: DivisionFacts, cash: Callable[[int], str]) -> list[str]:
    """The change per room (leftover cents on the first rooms) and the plain assumption."""
    assert f.previous_rent is not None
    change, rooms = f.rent - f.previous_rent, len(f.lines)
    low, odd = divmod(change, rooms)
    way = "more" if change > 0 else "less"
    each = (
        f"{cash(abs(low + 1))} (the first rooms listed) or {cash(abs(low))} {way}"
        if odd
        else f"{cash(abs(low))} {way}"
    )
    return [
        f"The rent changed from {cash(f.previous_rent)} to {cash(f.rent)}. These are the "
        f"prices you agreed to before, with the difference spread equally over the {rooms} "
        f"rooms: each costs {each}."
        + (" Shared costs stay as they were." if f.shared_total else ""),
        "This assumes that money counts one-for-one for each of you: the same change on every "
        "room leaves your preference between rooms as it was, so nobody would rather swap now "
        "who would not before. If the new price changes that for you (a budget, say), tap "
        '"I\'d rather swap" and I will ask everyone questions again.',
    ]
