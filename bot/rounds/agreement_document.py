"""The written agreement of a round everyone agreed to: facts in, Markdown or HTML text out.

Pure: no Telegram, no storage, no clock (the settlement time is in the facts). The document
is for the flatmates' own records, so it says everything needed to understand the split later
(rooms, who pays what, the method, the evidence, who agreed when) and nothing more: of each
member's answers only the one that supports their own room appears, never any other.

Amounts are exact minor units shown with :func:`solver.money.format_minor` and the currency
code, so the document never depends on a locale and every figure can be added up by hand.
Names and room names are typed by people: Markdown special characters are backslash-escaped
and HTML goes through :func:`html.escape`.
"""

from __future__ import annotations

import html
import re
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import UTC, datetime

from bot.rounds.caution import CAUTION
from bot.rounds.messages import AgreementFacts, AgreementLine
from solver.money import format_minor

TITLE = "Flatpact: who takes which room, and who pays what"
METHOD = (
    "Each of you answered, privately, questions of one kind: at these room prices, which room "
    "would you take? Flatpact walked across a grid of possible price lists, guided by the "
    "answers, until it reached prices at which each of you had chosen a different room "
    "(Sperner's lemma guarantees such a place exists). It then made the grid finer until "
    "every answer behind the split was given at prices within the tolerance of the final "
    "ones. It assumes that you would take a free room rather than pay for another, and that "
    "a room never gets less attractive by getting cheaper."
)
#: Characters with inline meaning in Markdown; everything we escape sits inside a sentence or
#: a table cell, never at the start of a line, so list and heading markers need no escape.
_MD_SPECIAL = re.compile(r"([\\`*_\[\]<>|~#])")


@dataclass(frozen=True, slots=True)
class Document:
    """One rendering of the agreement: a file name and its text."""

    filename: str
    text: str
    mime_type: str


def when(epoch: int) -> str:
    """``2025-03-01 18:30 UTC``: one unambiguous time zone for everyone in the document."""
    return datetime.fromtimestamp(epoch, UTC).strftime("%Y-%m-%d %H:%M UTC")


def amount(minor: int, f: AgreementFacts) -> str:
    return f"{format_minor(minor, f.decimals)} {f.currency}"


def file_stem(f: AgreementFacts) -> str:
    day = datetime.fromtimestamp(f.settled_at, UTC).strftime("%Y-%m-%d")
    return f"flatpact-agreement-{day}-round-{f.round_id}"


def farthest(line: AgreementLine, f: AgreementFacts) -> int:
    """How far (per room) the prices of the member's supporting answer are from the final ones."""
    final = _final_prices(f)
    return max(abs(a - b) for a, b in zip(line.evidence_prices, final, strict=True))


def _final_prices(f: AgreementFacts) -> list[int]:
    prices = [0] * len(f.rooms)
    for line in f.lines:
        prices[line.room_index] = line.price
    for room, price in zip(f.empty_rooms, f.empty_prices, strict=True):
        prices[f.rooms.index(room)] = price
    return prices


# --- the content, independent of the markup ---------------------------------------------------


@dataclass(frozen=True, slots=True)
class _Content:
    """The document as plain text pieces; each renderer adds its own markup."""

    flat: list[str]
    header: tuple[str, ...]
    rows: Sequence[tuple[str, ...]]
    total: tuple[str, ...]
    empties: list[str]
    shared: str
    evidence: list[str]
    guarantee: str
    agreed: list[str]


def _content(f: AgreementFacts) -> _Content:
    room_total = sum(line.price for line in f.lines)
    shared_total = sum(line.shared for line in f.lines)
    flat = [
        f"Agreed: {when(f.settled_at)} (round {f.round_id})",
        f"Total per month: {amount(f.rent, f)}",
        f"Rooms in the split: {', '.join(f.rooms)}",
    ]
    if f.common:
        flat.append(f"Not let (common space or storage): {', '.join(f.common)}")
    if f.previous_rent is not None and f.previous_settled_at is not None:
        flat.append(
            f"Rent change: the agreement of {when(f.previous_settled_at)} (total "
            f"{amount(f.previous_rent, f)}) re-priced, the difference spread equally over the "
            "let rooms. This keeps it free of envy only if money counts one-for-one for each "
            "member; each member agreed to it again"
        )
    rows: list[tuple[str, ...]] = [
        (
            line.member,
            line.room,
            amount(line.price, f),
            amount(line.shared, f),
            amount(line.price + line.shared, f),
        )
        for line in f.lines
    ]
    total: tuple[str, ...] = (
        "Total",
        f"{len(f.lines)} rooms let",
        amount(room_total, f),
        amount(shared_total, f),
        amount(room_total + shared_total, f),
    )
    empties = [
        f"{room} stays empty; nobody would rather have it at {amount(price, f)}."
        for room, price in zip(f.empty_rooms, f.empty_prices, strict=True)
    ]
    header: tuple[str, ...] = ("Member", "Room", "Room price", "Shared part", "Pays")
    if not shared_total:  # no shared costs: the shared column would be all zeros

        def keep(cells: tuple[str, ...]) -> tuple[str, ...]:
            return cells[:3] + cells[4:]

        header, rows, total = keep(header), [keep(row) for row in rows], keep(total)
    return _Content(
        flat=flat,
        header=header,
        rows=rows,
        total=total,
        empties=empties,
        shared=_shared_words(f),
        evidence=[_evidence_words(line, f) for line in f.lines],
        guarantee=(
            f"Tolerance: {amount(f.tolerance, f)}. For anyone to whom money counts one-for-one, "
            f"swapping with anyone at these prices is worth at most {amount(f.envy_bound, f)}."
        ),
        agreed=[f"{line.member} agreed at {when(line.accepted_at)}." for line in f.lines],
    )


def _shared_words(f: AgreementFacts) -> str:
    if not f.shared and not f.per_person:
        return "There are no shared costs: the whole total is split by rooms."
    parts = []
    if f.shared:
        parts.append(f"{amount(f.shared, f)} is shared evenly")
    if f.per_person:
        parts.append(f"each member pays {amount(f.per_person, f)} on top (fixed per person)")
    return (
        f"Shared costs: {' and '.join(parts)}; the rest of the total is split by rooms. "
        "Where an even share does not come out in whole units, the first members listed "
        "carry one unit more."
    )


def _evidence_words(line: AgreementLine, f: AgreementFacts) -> str:
    prices = ", ".join(
        f"{room} {amount(price, f)}"
        for room, price in zip(f.rooms, line.evidence_prices, strict=True)
    )
    return (
        f"{line.member} chose {line.room} when the rooms were priced {prices} "
        f"(at most {amount(farthest(line, f), f)} away from the final prices)."
    )


# --- Markdown ------------------------------------------------------------------------------


def md_escape(text: str) -> str:
    """Backslash-escape Markdown's inline specials (CommonMark allows escaping any ASCII
    punctuation, spec section 2.4 "Backslash escapes")."""
    return _MD_SPECIAL.sub(r"\\\1", text)


def markdown(f: AgreementFacts) -> Document:
    c = _content(f)

    def row(cells: tuple[str, ...]) -> str:
        return "| " + " | ".join(md_escape(cell) for cell in cells) + " |"

    lines = [
        f"# {md_escape(TITLE)}",
        "",
        *[f"- {md_escape(item)}" for item in c.flat],
        "",
        "## Who takes which room",
        "",
        row(c.header),
        "|" + "|".join(" --- " for _ in c.header) + "|",
        *[row(cells) for cells in c.rows],
        row(c.total),
        "",
        *[f"- {md_escape(item)}" for item in c.empties],
        *([""] if c.empties else []),
        md_escape(c.shared),
        "",
        "## How the split was worked out",
        "",
        md_escape(METHOD),
        "",
        "## Why nobody would rather swap",
        "",
        *[f"- {md_escape(item)}" for item in c.evidence],
        "",
        md_escape(c.guarantee),
        "",
        "## Agreement",
        "",
        *[f"- {md_escape(item)}" for item in c.agreed],
        "",
        "## Please note",
        "",
        md_escape(CAUTION),
        "",
    ]
    return Document(f"{file_stem(f)}.md", "\n".join(lines), "text/markdown")


# --- HTML ----------------------------------------------------------------------------------


#: Readable on paper: one column of text, ruled table, amounts right-aligned.
PRINT_STYLE = (
    "body{font-family:Georgia,serif;max-width:42em;margin:2em auto;line-height:1.4}"
    "table{border-collapse:collapse;width:100%}"
    "th,td{border:1px solid #444;padding:.3em .5em;text-align:left}"
    "td:nth-child(n+3),th:nth-child(n+3){text-align:right}"
    "tfoot td{font-weight:bold}"
    "@media print{body{margin:0;max-width:none}}"
)


def html_document(f: AgreementFacts) -> Document:
    c = _content(f)
    e = html.escape

    def items(texts: list[str]) -> str:
        return "<ul>\n" + "\n".join(f"<li>{e(t)}</li>" for t in texts) + "\n</ul>"

    def cells(tag: str, values: tuple[str, ...]) -> str:
        return "<tr>" + "".join(f"<{tag}>{e(v)}</{tag}>" for v in values) + "</tr>"

    body = [
        f"<h1>{e(TITLE)}</h1>",
        items(c.flat),
        "<h2>Who takes which room</h2>",
        "<table>",
        f"<thead>{cells('th', c.header)}</thead>",
        "<tbody>",
        *[cells("td", row) for row in c.rows],
        "</tbody>",
        f"<tfoot>{cells('td', c.total)}</tfoot>",
        "</table>",
        *([items(c.empties)] if c.empties else []),
        f"<p>{e(c.shared)}</p>",
        "<h2>How the split was worked out</h2>",
        f"<p>{e(METHOD)}</p>",
        "<h2>Why nobody would rather swap</h2>",
        items(c.evidence),
        f"<p>{e(c.guarantee)}</p>",
        "<h2>Agreement</h2>",
        items(c.agreed),
        "<h2>Please note</h2>",
        f"<p>{e(CAUTION)}</p>",
    ]
    text = "\n".join(
        [
            "<!DOCTYPE html>",
            '<html lang="en">',
            '<head><meta charset="utf-8">',
            f"<title>{e(TITLE)}</title>",
            f"<style>{PRINT_STYLE}</style></head>",
            "<body>",
            *body,
            "</body>",
            "</html>",
            "",
        ]
    )
    return Document(f"{file_stem(f)}.html", text, "text/html")
