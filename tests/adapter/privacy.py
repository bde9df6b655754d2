"""The promise people rely on most: nothing meant for one person is ever posted in a group.

Checked against what the stand-in shows in every group and supergroup chat, cross-read with
the outbox the bot stored (what each sent message was *meant* to be, and for whom).
"""

from __future__ import annotations

import re
from pathlib import Path

from bot.adapter.texts import render
from bot.rounds.outbox_codec import decode
from bot.sandbox import BotApiStandIn
from tests.adapter.harness import outbox_rows

#: Openings only private messages have: questions (asked, answered, withdrawn; "Question 3"
#: one at a time, "Round 3 of about 7" in rounds), the "Saved: you would take ..."
#: confirmation, and the invitation to give rough values and its confirmation.
PRIVATE_OPENINGS = re.compile(
    r"^(Reminder, this one is still open\.\n)?(Question \d+|Round \d+( of about \d+)?):"
    r"|^Saved: |^Optional, to help me|^Noted, privately"
)


async def private_texts_in_groups(standin: BotApiStandIn, db_path: Path) -> list[str]:
    """Every bot message in a group chat that was meant for a private chat (empty: all well)."""
    rows = await outbox_rows(db_path)
    private_rows = [(row, decode(row["payload"])) for row in rows]
    private_rows = [(row, m) for row, m in private_rows if m.to.private]
    meant_private = {(row["chat_id"], row["message_id"]) for row, _ in private_rows}
    private_texts = {render(m, "en") for _, m in private_rows}
    world = standin.world
    leaks = []
    for message in world.messages:
        if not message.from_bot or message.chat.type == "private":
            continue
        text = message.text or ""
        if (
            (message.chat.id, message.message_id) in meant_private
            or text in private_texts
            or PRIVATE_OPENINGS.search(text)
        ):
            leaks.append(f"chat {message.chat.id} message {message.message_id}: {text[:80]!r}")
    return leaks


async def assert_private_stays_private(standin: BotApiStandIn, db_path: Path) -> None:
    leaks = await private_texts_in_groups(standin, db_path)
    assert leaks == [], f"private text reached a group: {leaks}"
