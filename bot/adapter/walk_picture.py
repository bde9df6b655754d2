"""The picture that goes with a proposal: where the suggested split lies among all splits.

A proposal asks people to trust a result they did not see being made. The picture shows the
proposal among every way of splitting the rent, with the band of prices it vouches for; it
never shows anyone's answers (what it may show is argued in :mod:`bot.adapter.pictures`). It is an
extra: anything going wrong here is logged and the proposal stands without it
(:func:`send_walk_picture` never raises).
"""

from __future__ import annotations

import asyncio
import logging
from dataclasses import dataclass

from telegram import Bot

from bot.adapter.pictures import PictureData, picture_data, render_png
from bot.rounds.caution import CAUTION
from bot.rounds.engine import Engine

log = logging.getLogger(__name__)
FILENAME = "walk.png"
#: Telegram Bot API, sendPhoto: caption is 0-1024 characters after entities parsing
#: (core.telegram.org/bots/api#sendphoto).
CAPTION_LIMIT = 1024
CAPTION = (
    "Where the suggested split lies: the proposed price of each room, give or take the "
    "tolerance, next to an even split. Your answers stay private: the picture shows none "
    f"of them. {CAUTION}"
)

#: For a split re-priced for a new rent: nobody was asked anything, nothing is vouched for
#: beyond the agreement it moves.
REPRICED_CAPTION = (
    "Where the re-priced split lies: the agreed split with every room's price moved by an "
    "equal share of the rent change, next to an even split. Nobody was asked anything new; "
    f"the picture shows no one's answers. {CAUTION}"
)


def caption_for(data: PictureData) -> str:
    """The picture's caption: what it shows, within the Bot API's caption limit."""
    return (CAPTION if data.band else REPRICED_CAPTION)[:CAPTION_LIMIT]


@dataclass(frozen=True, slots=True)
class WalkPicture:
    """A rendered picture of one round's walk, ready to send."""

    png: bytes
    caption: str


async def walk_picture(engine: Engine, round_id: int) -> WalkPicture | None:
    """Render the round's walk; None when the round has no walk yet."""
    found = await engine.search_of(round_id)
    if found is None:
        return None
    walk, settings = found
    data = picture_data(walk)
    # Matplotlib takes a moment; a worker thread keeps the bot answering meanwhile.
    png = await asyncio.to_thread(render_png, data, settings.currency, settings.decimals)
    return WalkPicture(png, caption_for(data))


async def send_walk_picture(bot: Bot, engine: Engine, chat_id: int, round_id: int) -> int | None:
    """Send the picture to the group as a photo; returns its message id, None on any failure."""
    try:
        picture = await walk_picture(engine, round_id)
        if picture is None:
            return None
        sent = await bot.send_photo(
            chat_id, photo=picture.png, caption=picture.caption, filename=FILENAME
        )
    except asyncio.CancelledError:
        raise
    except Exception:
        log.exception("the picture for round %s was not sent; the proposal stands", round_id)
        return None
    return sent.message_id
