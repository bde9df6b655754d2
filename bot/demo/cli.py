"""``python -m bot.demo`` (``make demo``): a whole round of the real bot, no token needed.

A local stand-in for the Telegram Bot API runs on 127.0.0.1, the real bot polls it, and
invented flatmates of an invented flat act the round out: the admin sets it up, everyone
joins and opens a private chat, answers the private questions and agrees to the split. The
terminal shows every chat as it happens and ends with the division, each flatmate's envy by
their own hidden values, and where the picture of the walk was written. ``--play NAME`` lets
you answer for one flatmate (type room numbers; a pipe works too).
"""

from __future__ import annotations

import argparse
import asyncio
import logging
from collections.abc import Sequence
from decimal import Decimal, InvalidOperation
from pathlib import Path

from babel.numbers import format_currency
from rich.console import Console
from rich.panel import Panel
from rich.table import Table

from bot.adapter.help_texts import HOW_IT_WORKS
from bot.adapter.texts import money
from bot.demo.flat import ADDRESS, CURRENCY, DECIMALS, FLATMATES, rooms_for
from bot.demo.sandbox_round import DemoOptions, DemoResult, run_round
from bot.demo.terminal_player import InputEnded
from bot.rounds.caution import CAUTION
from bot.rounds.phases import Phase
from bot.sandbox import SpecNotFound
from solver.problem import MIN_TOLERANCE
from solver.simulate import MODELS

#: Characters of a group post's first line shown in the list of the group's posts.
POST_LINE = 72


def tolerance_minor(text: str) -> int:
    """``1.00`` (euros) -> 100 cents, exactly; more decimals than cents is refused."""
    try:
        value = Decimal(text).scaleb(DECIMALS)
    except InvalidOperation as bad:
        raise argparse.ArgumentTypeError(f"{text!r} is not an amount like 1.00") from bad
    if value != value.to_integral_value() or value < MIN_TOLERANCE:
        smallest = Decimal(MIN_TOLERANCE).scaleb(-DECIMALS)
        raise argparse.ArgumentTypeError(f"use whole cents, at least {smallest}")
    return int(value)


def parse(argv: Sequence[str] | None) -> DemoOptions:
    parser = argparse.ArgumentParser(
        prog="python -m bot.demo",
        description="Run one Flatpact round in the local sandbox with invented flatmates.",
    )
    parser.add_argument("--rooms", type=int, default=4, choices=range(2, 7), metavar="N")
    parser.add_argument("--seed", type=int, default=7, help="the flatmates' hidden tastes")
    parser.add_argument("--model", choices=MODELS, default="quasi-linear")
    parser.add_argument(
        "--tolerance", type=tolerance_minor, default=100, help="in euros (default 1.00)"
    )
    parser.add_argument("--out", type=Path, default=Path("out"), help="folder for results")
    parser.add_argument(
        "--rough",
        action="store_true",
        help="the flatmates first give rough values per room (their own, give or take 10%%)",
    )
    parser.add_argument(
        "--play", metavar="NAME", help=f"answer for one flatmate ({', '.join(FLATMATES)})"
    )
    args = parser.parse_args(argv)
    names = FLATMATES[: args.rooms]
    if args.play is not None and args.play not in names:
        parser.error(f"--play takes one of {', '.join(names)} for {args.rooms} rooms")
    return DemoOptions(
        args.rooms, args.seed, args.model, args.tolerance, args.out, args.play, rough=args.rough
    )


def euros(minor: int) -> str:
    return money(minor, CURRENCY, DECIMALS, "en")


def envy_text(envy: float) -> str:
    """Envy (a float in cents, from hidden values; nobody pays it) shown as euros: Babel
    does the display, to the currency's digits."""
    amount = Decimal(repr(envy)).scaleb(-DECIMALS)
    return str(format_currency(amount, CURRENCY, locale="en"))


def summary(console: Console, result: DemoResult) -> None:
    """The agreed division, envy by each flatmate's own values, questions, picture."""
    table = Table(
        title=f"{ADDRESS}: the division ({Phase(result.phase).in_words})", title_justify="left"
    )
    for column in ("Flatmate", "Room", "Pays", "Envy*", "OK", "Questions"):
        table.add_column(column, justify="left" if column in ("Flatmate", "Room") else "right")
    for name in result.names:
        room = result.assignment[name]
        envy = result.envy(name)
        played = name == result.answered_by_hand
        table.add_row(
            name + (" (you)" if played else ""),
            result.rooms[room],
            euros(result.prices[room]),
            "you answered" if played else envy_text(envy),
            "-" if played else ("yes" if envy <= result.tolerance else "NO"),
            str(result.asked.get(name, 0)),
        )
    console.print(table)
    console.print(
        "*Envy: the most each would pay to swap with anyone, by their own hidden values; "
        "OK means it is within the tolerance."
    )
    total = sum(result.prices)
    check = "matches" if total == result.rent else "DOES NOT match"
    console.print(f"Total {euros(total)}, which {check} the rent of {euros(result.rent)}.")
    console.print(f"Tolerance {euros(result.tolerance)}.")
    console.print(CAUTION)
    for path in result.documents:
        console.print(f"Written agreement (as sent to the group): {path}")
    if result.picture is not None:
        console.print(f"Picture of the suggested split (as sent to the group): {result.picture}")
    else:
        console.print("No picture was sent to the group (see the log above).")
    console.print(
        f"New messages in the group: {len(result.group_posts)} (everything else was an edit):"
    )
    for number, first_line in enumerate(result.group_posts, start=1):
        shown = first_line if len(first_line) <= POST_LINE else first_line[: POST_LINE - 1] + "…"
        console.print(f"  {number}. {shown}", markup=False, highlight=False)
    console.print(f"The bot's database: {result.database}")
    console.print(
        f"{result.api_calls} Bot API calls, {len(result.violations)} against the spec; "
        f"wall time {result.seconds:.1f} s."
    )
    console.print(Panel(HOW_IT_WORKS, title="How it works", expand=False))


def _input_ended(error: BaseException) -> InputEnded | None:
    """The InputEnded inside (possibly nested) task-group errors, if that is what stopped us."""
    if isinstance(error, InputEnded):
        return error
    if isinstance(error, BaseExceptionGroup):
        for inner in error.exceptions:
            found = _input_ended(inner)
            if found is not None:
                return found
    return None


def main(argv: Sequence[str] | None = None, console: Console | None = None) -> int:
    options = parse(argv)
    # The stand-in's HTTP server logs each request; the chat log already tells the story.
    logging.getLogger("tornado.access").setLevel(logging.CRITICAL)
    # A skipped outbox tick (the previous one still sending, on a busy machine) is harmless:
    # the next tick sends. It is not part of the story the chat log tells.
    logging.getLogger("apscheduler").setLevel(logging.ERROR)
    shown = console or Console(highlight=False)
    rooms = ", ".join(f"{r.name} ({r.about})" for r in rooms_for(options.rooms))
    shown.rule(f"Flatpact sandbox demo: {ADDRESS}")
    shown.print(f"An invented flat with {options.rooms} rooms: {rooms}.")
    shown.print("Telegram is simulated on 127.0.0.1; the bot is the real one.")
    try:
        result = asyncio.run(run_round(options, shown))
    except SpecNotFound as missing:
        shown.print(f"The Bot API spec is missing: {missing}")
        return 2
    except (InputEnded, ExceptionGroup) as stopped:
        ended = _input_ended(stopped)
        if ended is None:
            raise
        shown.print(f"Stopped: {ended}.")
        return 3
    summary(shown, result)
    return 0 if result.phase == "settled" and not result.violations else 1


if __name__ == "__main__":
    raise SystemExit(main())
