"""Pictures of a walk: how the prices moved, for the group and the demo.

Flatmates trust what they can see. For three rooms we draw the price triangle: every price
list someone was asked about, coloured and shaped by the room they chose, the order in which
the walk visited them, and the final small cell. For more rooms we draw each room's price
across the questions, converging to the proposal.

The data a picture shows is computed first (:func:`picture_data`, plain values, testable)
and drawn second (:func:`render_png`, matplotlib's object API without pyplot: no display and
no global figure state, so the bot can render in a worker thread while it serves updates).
Palette: Okabe & Ito's colour-blind-safe set ("Color Universal Design", 2008); every room also
has its own marker shape so colour is never the only cue.
"""

from __future__ import annotations

import io
import math
from collections.abc import Sequence
from dataclasses import dataclass

from matplotlib.axes import Axes
from matplotlib.figure import Figure

from bot.rounds.searches import AnySearch, records_of

OKABE_ITO = (
    "#E69F00",
    "#56B4E9",
    "#009E73",
    "#F0E442",
    "#0072B2",
    "#D55E00",
    "#CC79A7",
    "#000000",
    "#999999",
    "#882255",
)
MARKERS = ("o", "s", "^", "D", "v", "P", "X", "*", "h", "<")


@dataclass(frozen=True, slots=True)
class Visit:
    """One labelled price list of the walk, in the order the walk needed it.

    ``asked``: a member answered at exactly these prices (when the walk got there, or ahead of
    time); otherwise the label came from the floor rule or was implied by earlier answers.
    """

    prices: tuple[int, ...]
    room: int
    asked: bool


@dataclass(frozen=True, slots=True)
class PictureData:
    """Everything a picture shows, as plain numbers and names."""

    rooms: tuple[str, ...]
    rent: int
    floor: int
    visits: tuple[Visit, ...]
    final_cell: tuple[tuple[int, ...], ...]
    proposal: tuple[int, ...] | None


def picture_data(walk: AnySearch) -> PictureData:
    """The price lists the search labelled (asked or inferred), in order, and its result."""
    visits = tuple(
        Visit(r.prices, r.room, r.source in ("asked", "repeat"))
        for r in records_of(walk)
        if r.vertex is not None or r.source in ("asked", "repeat", "rule")
    )
    proposal = walk.proposal()
    problem = walk.problem
    return PictureData(
        rooms=problem.rooms,
        rent=problem.rent,
        floor=problem.floor,
        visits=visits,
        final_cell=tuple(e.prices for e in proposal.evidence) if proposal else (),
        proposal=proposal.prices if proposal else None,
    )


def triangle_xy(prices: Sequence[int], floor: int, rent: int) -> tuple[float, float]:
    """Position of a three-room price list in the triangle (corner i: room i costs it all)."""
    budget = rent - 3 * floor
    w = [(p - floor) / budget for p in prices]
    return w[1] + w[2] / 2, w[2] * math.sqrt(3) / 2


def render_png(data: PictureData, currency: str = "", decimals: int = 2) -> bytes:
    """Draw the picture and return PNG bytes (``decimals``: minor units per major unit)."""
    fig = _triangle(data) if len(data.rooms) == 3 else _price_lines(data, currency, 10**decimals)
    buffer = io.BytesIO()
    fig.savefig(buffer, format="png", dpi=110, bbox_inches="tight")
    return buffer.getvalue()


def _triangle(data: PictureData) -> Figure:
    fig = Figure(figsize=(6.4, 5.8))
    ax = fig.subplots()
    corners = [(0.0, 0.0), (1.0, 0.0), (0.5, math.sqrt(3) / 2)]
    ax.fill(*zip(*corners, strict=True), color="#f4f1ea", zorder=0)
    ax.plot(*zip(*(corners + corners[:1]), strict=True), color="#5b5b5b", lw=1.2)
    offsets = [(-0.04, -0.05), (0.04, -0.05), (0.0, 0.04)]
    aligns = ["right", "left", "center"]
    for (cx, cy), (dx, dy), name, align in zip(corners, offsets, data.rooms, aligns, strict=True):
        ax.text(cx + dx, cy + dy, f"{name}\ncosts it all", ha=align, va="center", fontsize=9)
    path = [triangle_xy(v.prices, data.floor, data.rent) for v in data.visits]
    if path:
        ax.plot(*zip(*path, strict=True), color="#7a7a7a", lw=0.6, alpha=0.6, zorder=1)
    for room, name in enumerate(data.rooms):
        mine = [p for p, v in zip(path, data.visits, strict=True) if v.room == room]
        if mine:
            xs, ys = zip(*mine, strict=True)
            ax.scatter(
                xs,
                ys,
                s=22,
                color=OKABE_ITO[room],
                marker=MARKERS[room],
                edgecolor="#333333",
                linewidth=0.4,
                label=f"chose {name}",
                zorder=2,
            )
    if data.final_cell:
        cell = [triangle_xy(p, data.floor, data.rent) for p in data.final_cell]
        ax.fill(*zip(*cell, strict=True), facecolor="none", edgecolor="#000000", lw=1.6, zorder=3)
    if data.proposal is not None:
        px, py = triangle_xy(data.proposal, data.floor, data.rent)
        ax.scatter([px], [py], s=90, marker="*", color="#000000", zorder=4, label="proposal")
    ax.set_aspect("equal")
    ax.axis("off")
    ax.legend(loc="upper right", fontsize=8, frameon=False)
    ax.set_title("Price lists asked about, and the room chosen", fontsize=11, pad=28)
    if data.final_cell:
        _zoom(ax, data, path)
    return fig


def _zoom(ax: Axes, data: PictureData, path: Sequence[tuple[float, float]]) -> None:
    """An inset around the last stretch of the walk, where the points crowd together."""
    tail = path[len(path) // 2 :] or path
    xs, ys = [p[0] for p in tail], [p[1] for p in tail]
    margin = max(max(xs) - min(xs), max(ys) - min(ys), 1e-4) * 0.15
    inset = ax.inset_axes((0.02, 0.55, 0.36, 0.36))
    inset.plot(xs, ys, color="#7a7a7a", lw=0.6, alpha=0.7)
    for (x, y), visit in zip(path[len(path) - len(tail) :], data.visits[-len(tail) :], strict=True):
        inset.scatter(
            [x],
            [y],
            s=18,
            color=OKABE_ITO[visit.room],
            marker=MARKERS[visit.room],
            edgecolor="#333333",
            linewidth=0.4,
        )
    cell = [triangle_xy(p, data.floor, data.rent) for p in data.final_cell]
    inset.fill(*zip(*cell, strict=True), facecolor="none", edgecolor="#000000", lw=1.4)
    inset.set_xlim(min(xs) - margin, max(xs) + margin)
    inset.set_ylim(min(ys) - margin, max(ys) + margin)
    inset.set_xticks([])
    inset.set_yticks([])
    inset.set_title("last steps, enlarged", fontsize=8)


def _price_lines(data: PictureData, currency: str, per_major: int) -> Figure:
    fig = Figure(figsize=(7.2, 4.4))
    ax = fig.subplots()
    steps = range(1, len(data.visits) + 1)
    for room, name in enumerate(data.rooms):
        series = [v.prices[room] / per_major for v in data.visits]
        ax.plot(
            steps,
            series,
            color=OKABE_ITO[room],
            marker=MARKERS[room],
            markersize=3.5,
            lw=1.1,
            label=name,
        )
        if data.proposal is not None:
            ax.axhline(data.proposal[room] / per_major, color=OKABE_ITO[room], lw=0.8, ls=":")
    ax.set_xlabel("price lists, in the order the walk needed them")
    ax.set_ylabel(f"price per room {currency}".strip())
    ax.set_title("Each room's price converging to the proposal (dotted)", fontsize=11)
    ax.legend(fontsize=8, frameon=False, ncol=2)
    ax.grid(alpha=0.25)
    return fig
