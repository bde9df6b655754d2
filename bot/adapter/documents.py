"""Sending the written agreement to the group as files (Telegram ``sendDocument``), with the
outcome.

The engine emits one :attr:`~bot.rounds.messages.Kind.AGREEMENT` message; this sends it as two
documents, Markdown then HTML. The outcome ("Everyone agreed. The split: ...", with the
caution) is the first file's caption, so the group's last new message of a round is the
outcome with its papers; an outcome too long for a caption goes out as a message of its own
just before the files. Kept apart from :mod:`bot.adapter.handlers` so the outbox sender can call
it without importing the handlers (which import the runtime, which imports the sender).
"""

from __future__ import annotations

from telegram import Bot, InputFile

from bot.adapter.texts import agreement_caption, agreement_files, fit
from bot.rounds.messages import AgreementFacts, Outgoing

#: Telegram Bot API, sendDocument: caption is 0-1024 characters after entities parsing
#: (core.telegram.org/bots/api#senddocument).
CAPTION_LIMIT = 1024


def fits_caption(text: str) -> bool:
    """Within the caption limit, counted in UTF-16 code units as Telegram counts characters
    (Bot API, "entities": offsets and lengths are in UTF-16 code units)."""
    return len(text.encode("utf-16-le")) // 2 <= CAPTION_LIMIT


async def send_agreement(
    bot: Bot, message: Outgoing, locale: str, outcome: str | None = None
) -> int:
    """Send the outcome and both renderings; returns the message id of the last file."""
    facts = message.facts
    if not isinstance(facts, AgreementFacts):
        raise TypeError(f"send_agreement needs AgreementFacts, got {type(facts).__name__}")
    chat_id = message.to.chat_id
    if outcome is not None and not fits_caption(outcome):
        await bot.send_message(chat_id, fit(outcome))
        outcome = None
    paper = agreement_caption(facts, locale)
    captions = (outcome, paper) if outcome is not None else (None, paper)
    sent_id = 0
    for document, caption in zip(agreement_files(facts), captions, strict=True):
        upload = InputFile(document.text.encode("utf-8"), filename=document.filename)
        shown = None if caption is None else fit(caption, CAPTION_LIMIT)
        sent = await bot.send_document(chat_id, upload, caption=shown)
        sent_id = sent.message_id
    return sent_id
