"""The demo end to end, in-process: the real bot, the stand-in, invented simulated flatmates.

Outside references: the Telegram Bot API spec (the stand-in checks every call against
bot/sandbox/botapi/api.json); the PNG specification for the file's signature and
header; Babel's CLDR data to format the amounts we look for in the printed summary. The
division is read back from the bot's SQLite file, and envy is computed here from each
flatmate's hidden values, not taken from the demo's own table.
"""

from __future__ import annotations

import io
import json
import struct
from decimal import Decimal
from pathlib import Path

from babel.numbers import format_currency
from rich.console import Console

from bot.adapter.pictures import picture_data, render_png
from bot.adapter.walk_picture import CAPTION_LIMIT
from bot.demo.cli import main
from bot.demo.sandbox_round import DemoOptions, DemoResult, run_round
from bot.rounds.search_steps import stored_search
from bot.rounds.searches import AnySearch, records_of
from bot.storage.sqlite import SqliteStore

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # PNG spec (ISO/IEC 15948) section 5.2


def euros(minor: int) -> str:
    return str(format_currency(Decimal(minor).scaleb(-2), "EUR", locale="en"))


async def stored(
    database: Path,
) -> tuple[dict[str, int], list[int], AnySearch, set[tuple[int, ...]]]:
    """From the bot's own file: the agreement (by member name), the walk, the asked prices."""
    store = await SqliteStore.open(database)
    try:
        audit = (await store.dump())["audit"]
        row = next(r for r in audit if r[3] == "agreement")
        round_id, detail = row[1], json.loads(row[5])
        async with store.transaction() as tx:
            names = {str(m.user_id): m.display_name for m in await tx.members(round_id)}
            record = await tx.round_by_id(round_id)
            asked = {q.prices for q in await tx.questions(round_id)}
            assert record is not None
            search = await stored_search(tx, record)
    finally:
        await store.close()
    assert search is not None
    assignment = {names[user]: room for user, room in detail["assignment"].items()}
    return assignment, detail["prices"], search, asked


async def three_rooms(tmp_path: Path) -> tuple[DemoResult, str]:
    printed = io.StringIO()
    console = Console(file=printed, width=120, highlight=False)
    options = DemoOptions(rooms=3, seed=11, tolerance=100, out=tmp_path, patience=20)
    return await run_round(options, console), printed.getvalue()


async def test_demo_round_is_envy_free_by_the_flatmates_own_values(tmp_path: Path) -> None:
    result, chat_log = await three_rooms(tmp_path)
    assignment, prices, walk, _ = await stored(result.database)
    assert result.phase == "settled"
    assert sum(prices) == result.rent
    assert sorted(assignment.values()) == [0, 1, 2]
    for name, room in assignment.items():
        # The solver's promise for quasi-linear tenants: envy at most the tolerance.
        assert result.tenants[name].envy(prices, room) <= result.tolerance
    # The chat log showed the private questions and the group's suggested split.
    # Every press answered a question the member was sent; questions asked ahead of time may
    # be withdrawn before anyone presses, or refused when pressed just after withdrawal.
    presses = chat_log.count("pressed [I'd take")
    answered = len([r for r in records_of(walk) if r.source == "asked"])
    assert answered <= presses <= sum(result.asked.values())
    for name, room in assignment.items():
        assert f"• {name}: {result.rooms[room]}, {euros(prices[room])}" in chat_log
    # Outside reference: every call the bot made was valid by the Bot API spec.
    assert result.violations == ()


async def test_demo_shows_and_saves_the_written_agreement(tmp_path: Path) -> None:
    result, chat_log = await three_rooms(tmp_path)
    names = sorted(path.name for path in result.documents)
    assert [name.rsplit(".", 1)[1] for name in names] == ["html", "md"]
    for path in result.documents:
        assert path.parent == tmp_path and path.stat().st_size > 0
        assert f"(file {path.name}, " in chat_log  # shown as a file, not an empty line
    assert "\nFlatpact: \n" not in chat_log
    assert "<table>" in next(p for p in result.documents if p.suffix == ".html").read_text()


async def test_picture_is_sent_to_the_group_and_saved(tmp_path: Path) -> None:
    result, _ = await three_rooms(tmp_path)
    _, prices, walk, asked = await stored(result.database)
    assert [chat for chat, _ in result.sent_photos] == [result.group_id]
    caption = result.sent_photos[0][1] or ""
    assert 0 < len(caption) <= CAPTION_LIMIT  # Bot API sendPhoto: caption 0-1024 characters
    assert result.picture is not None
    png = result.picture.read_bytes()
    assert png.startswith(PNG_SIGNATURE)
    width, height = struct.unpack(">II", png[16:24])  # IHDR width, height (PNG spec 11.2.2)
    assert 300 <= width <= 2000 and 300 <= height <= 2000  # sensible for a phone (common practice)
    # The picture is drawn from the round's stored walk (rendering is deterministic) ...
    data = picture_data(walk)
    assert render_png(data, "EUR", 2) == png
    # ... and it shows the group only the proposal and the settings (tests/pictures proves
    # it does not depend on anyone's answers)
    assert data.proposal == tuple(prices)
    assert asked  # the round did ask private questions, none of which the picture carries


def test_main_prints_summary_and_how_it_works(tmp_path: Path) -> None:
    printed = io.StringIO()
    code = main(["--rooms", "2", "--seed", "5", "--out", str(tmp_path)], Console(file=printed))
    text = " ".join(printed.getvalue().split())  # the console wraps long lines
    assert code == 0
    assert "not legal or financial advice" in text
    # The caution comes with the split (its picture goes just before it), not before any
    # split exists.
    first_split = min(text.index("(picture walk.png"), text.index("Suggested split"))
    assert text.index("not legal or financial advice") > first_split
    assert "two assumptions" in text
    assert str(tmp_path / "walk.png") in text
    assert (tmp_path / "walk.png").is_file()


async def test_a_plain_four_member_round_posts_at_most_five_group_messages(
    tmp_path: Path,
) -> None:
    printed = io.StringIO()
    console = Console(file=printed, width=120, highlight=False)
    result = await run_round(DemoOptions(rooms=4, seed=7, out=tmp_path), console)
    chat_log = printed.getvalue()
    assert result.phase == "settled"
    assert "pressed [I'd rather swap]" not in chat_log  # a plain round: nobody objected
    # The target: at most five new group messages; everything else is an edit.
    posts = result.group_posts
    assert len(posts) <= 5
    status, picture, proposal, outcome, paper = posts
    assert status.startswith("Done: everyone agreed")  # the live status, rewritten to the end
    assert picture.startswith("(picture walk.png")  # before the proposal, so before agreeing
    assert proposal.startswith("Suggested split")
    assert outcome.startswith("(file ") and "Everyone agreed" in outcome
    assert paper.startswith("(file ")
    # The chat log printed the picture before anyone could agree to the split.
    assert chat_log.index("(picture walk.png") < chat_log.index("pressed [Agree]")
