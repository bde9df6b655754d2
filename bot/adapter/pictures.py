"""The picture that goes with a proposal: what the group may know, drawn.

Flatmates trust what they can see, but each one's answers are private. Every price list the
walk asked about, the room chosen there, and even the *sequence* of prices the walk visited
depend on individual answers (the grid's owner rule tells the group whose corner each point
was), so none of them is drawn. The group's picture shows only what the proposal message
already tells the group:

* the proposed price of every room, and the room count, rent and floor of the round;
* the band the proposal vouches for: "each of you chose your room at prices within the
  tolerance of these" — every room's price give or take the tolerance (a setting, not an
  answer);
* an even split of the rent as a reference point (it depends on nothing but the rent).

A split re-priced for a new rent (:mod:`bot.rounds.rent_change`) gets no tolerance band:
nobody chose anything at its prices; it is the agreed split with every room moved equally.

So two rounds with the same settings and the same proposed prices get the same picture,
whatever anyone answered (tested). Who takes which room is in the proposal text, not here.

For three let rooms we draw the price triangle (every way of splitting the rent) with the
even split, the proposal and its tolerance band (a small hexagon); for other room counts,
each room's proposed price as a bar with the band as an error bar and the even share as a line.

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
from fractions import Fraction

from matplotlib.figure import Figure
from matplotlib.patches import Polygon

from bot.rounds.money_text import shown
from bot.rounds.repriced_search import RepricedSearch
from bot.rounds.searches import AnySearch
from solver.money import format_minor, split_exactly

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
class PictureData:
    """Everything the group's picture shows: settings and the proposal, never an answer.

    ``even_split``: the rent split evenly among the let rooms (``None`` for a room that stays
    empty), a reference that depends on the rent alone. ``proposal``: every room's proposed
    price, or ``None`` before there is one.
    """

    rooms: tuple[str, ...]
    rent: int
    floor: int
    tolerance: int
    even_split: tuple[int | None, ...]
    proposal: tuple[int, ...] | None
    empty_rooms: tuple[int, ...]
    #: False for a split re-priced for a new rent: nobody chose anything at its prices, so
    #: no tolerance band is drawn (its promise is the agreement's, moved equally)
    band: bool = True


def picture_data(walk: AnySearch) -> PictureData:
    """What the group may see of a round's search: its settings and its proposal (see module
    doc)."""
    problem = walk.problem
    proposal = walk.proposal()
    empty = tuple(sorted(proposal.empty_rooms)) if proposal else ()
    let = [room for room in range(problem.size) if room not in empty]
    shares = split_exactly([Fraction(problem.rent, len(let))] * len(let), problem.rent)
    even: list[int | None] = [None] * problem.size
    for room, share in zip(let, shares, strict=True):
        even[room] = share
    return PictureData(
        rooms=problem.rooms,
        rent=problem.rent,
        floor=problem.floor,
        tolerance=problem.tolerance,
        even_split=tuple(even),
        proposal=proposal.prices if proposal else None,
        empty_rooms=empty,
        band=not isinstance(walk, RepricedSearch),
    )


def triangle_xy(prices: Sequence[int], floor: int, rent: int) -> tuple[float, float]:
    """Position of a three-room price list in the triangle (corner i: room i costs it all)."""
    budget = rent - 3 * floor
    w = [(p - floor) / budget for p in prices]
    return w[1] + w[2] / 2, w[2] * math.sqrt(3) / 2


def tolerance_band(proposal: Sequence[int], tolerance: int) -> list[tuple[int, ...]]:
    """Corners of the price lists within ``tolerance`` of ``proposal`` room by room.

    Moving up to the tolerance from one room to another keeps the total; in three rooms the
    set is a hexagon whose corners move exactly the tolerance from room ``j`` to room ``i``.
    """
    order = ((0, 1), (0, 2), (1, 2), (1, 0), (2, 0), (2, 1))
    corners = []
    for gain, loss in order:
        point = list(proposal)
        point[gain] += tolerance
        point[loss] -= tolerance
        corners.append(tuple(point))
    return corners


def render_png(data: PictureData, currency: str = "", decimals: int = 2) -> bytes:
    """Draw the picture and return PNG bytes (``decimals``: minor units per major unit)."""
    triangle = len(data.rooms) == 3 and not data.empty_rooms
    fig = _triangle(data, currency) if triangle else _price_bars(data, currency, decimals)
    buffer = io.BytesIO()
    fig.savefig(buffer, format="png", dpi=110, bbox_inches="tight")
    return buffer.getvalue()


def _triangle(data: PictureData, currency: str) -> Figure:
    fig = Figure(figsize=(7.6, 6.2))
    ax = fig.add_axes((0.24, 0.1, 0.74, 0.8))

    def cash(minor: int) -> str:
        return shown(minor, currency) if currency else str(minor)

    corners = [(0.0, 0.0), (1.0, 0.0), (0.5, math.sqrt(3) / 2)]
    outline = ax.fill(*zip(*corners, strict=True), color="#f4f1ea", zorder=0)[0]
    ax.plot(*zip(*(corners + corners[:1]), strict=True), color="#5b5b5b", lw=1.2)
    offsets = [(-0.04, -0.05), (0.04, -0.05), (0.0, 0.04)]
    aligns = ["right", "left", "center"]
    for room, ((cx, cy), (dx, dy), align) in enumerate(zip(corners, offsets, aligns, strict=True)):
        ax.scatter([cx], [cy], s=40, color=OKABE_ITO[room], marker=MARKERS[room], zorder=2)
        whole, others = cash(data.rent - 2 * data.floor), cash(data.floor)
        label = f"{data.rooms[room]} {whole}\n(the others {others})"
        ax.text(cx + dx, cy + dy, label, ha=align, va="center", fontsize=9)
    even = [p for p in data.even_split if p is not None]
    ex, ey = triangle_xy(even, data.floor, data.rent)
    ax.scatter([ex], [ey], s=50, marker="o", facecolor="none", edgecolor="#333333", zorder=3)
    ax.annotate("even split", (ex, ey), (6, -12), textcoords="offset points", fontsize=8)
    if data.proposal is not None:
        px, py = triangle_xy(data.proposal, data.floor, data.rent)
        ax.annotate("", (px, py), (ex, ey), arrowprops={"arrowstyle": "->", "color": "#5b5b5b"})
        ax.scatter([px], [py], s=110, marker="*", color="#000000", zorder=4, label="proposal")
        if data.band:
            band = [
                triangle_xy(p, data.floor, data.rent)
                for p in tolerance_band(data.proposal, data.tolerance)
            ]
            hexagon = Polygon(
                band, closed=True, facecolor="#56B4E9", alpha=0.35, edgecolor="#0072B2"
            )
            ax.add_patch(hexagon)
            hexagon.set_clip_path(outline)
            ax.plot([], [], color="#56B4E9", lw=6, alpha=0.6, label="within the tolerance")
            _zoom(fig, band, (px, py), cash(data.tolerance))
        prices = ", ".join(
            f"{room} {cash(price)}" for room, price in zip(data.rooms, data.proposal, strict=True)
        )
        fig.text(0.5, 0.03, f"Proposal: {prices}", ha="center", fontsize=9)
    ax.set_aspect("equal")
    ax.axis("off")
    ax.legend(loc="upper right", fontsize=8, frameon=False)
    ax.set_title("Every way to split the rent, and the proposal", fontsize=11, pad=28)
    return fig


def _zoom(
    fig: Figure, band: Sequence[tuple[float, float]], star: tuple[float, float], tolerance: str
) -> None:
    """A close-up of the proposal beside the triangle (never over it), where the tolerance
    band is too small to see; its caption gives the scale."""
    xs, ys = [p[0] for p in band], [p[1] for p in band]
    margin = max(max(xs) - min(xs), max(ys) - min(ys), 1e-4) * 0.6
    inset = fig.add_axes((0.01, 0.5, 0.21, 0.26))
    inset.fill(xs, ys, facecolor="#56B4E9", alpha=0.35, edgecolor="#0072B2")
    inset.scatter([star[0]], [star[1]], s=60, marker="*", color="#000000")
    inset.set_xlim(min(xs) - margin, max(xs) + margin)
    inset.set_ylim(min(ys) - margin, max(ys) + margin)
    inset.set_aspect("equal")
    inset.set_xticks([])
    inset.set_yticks([])
    inset.set_title("close-up of the split", fontsize=8)
    inset.set_xlabel(f"blue: every price list\nwithin {tolerance} per room", fontsize=7)


def _price_bars(data: PictureData, currency: str, decimals: int) -> Figure:
    per_major = 10**decimals
    fig = Figure(figsize=(7.2, max(3.0, 0.9 + 0.45 * len(data.rooms))))
    ax = fig.subplots()
    rows = range(len(data.rooms))
    for room in rows:
        even = data.even_split[room]
        if even is not None:
            ax.plot([even / per_major] * 2, [room - 0.4, room + 0.4], color="#333333", ls="--")
        if data.proposal is None:
            continue
        price = data.proposal[room] / per_major
        ax.barh(
            room,
            price,
            color=OKABE_ITO[room],
            edgecolor="#333333",
            hatch="//" if room in data.empty_rooms else None,
            xerr=data.tolerance / per_major if data.band else None,
            capsize=4,
        )
        ax.plot([price], [room], marker=MARKERS[room], color="#333333", markersize=5)
        label = format_minor(data.proposal[room], decimals)
        ax.annotate(
            label,
            (0, room),
            (6, 0),
            textcoords="offset points",
            va="center",
            fontsize=8,
            bbox={"boxstyle": "round,pad=0.2", "facecolor": "white", "alpha": 0.85, "lw": 0},
        )
    ax.set_yticks(list(rows), data.rooms)
    ax.invert_yaxis()
    ax.set_xlabel(f"proposed price {currency}".strip())
    title = (
        "Proposed price per room, give or take the tolerance; dashed: an even split"
        if data.band
        else "Price per room after the rent change; dashed: an even split"
    )
    if data.empty_rooms:
        title += "\nhatched: stays empty"
    ax.set_title(title, fontsize=10)
    ax.grid(axis="x", alpha=0.25)
    return fig
