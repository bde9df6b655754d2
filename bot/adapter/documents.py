"""Sending the written agreement to the group as files (Telegram ``sendDocument``).

The engine emits one :attr:`~bot.rounds.messages.Kind.AGREEMENT` message; this sends it as two
documents, Markdown then HTML, the second with a caption. Kept apart from
:mod:`bot.adapter.handlers` so the outbox sender can call it without importing the handlers (which
import the runtime, which imports the sender).
"""

from __future__ import annotations

from telegram import Bot, InputFile

from bot.adapter.texts import agreement_caption, agreement_files, fit
from bot.rounds.messages import AgreementFacts, Outgoing

#: Telegram Bot API, sendDocument: caption is 0-1024 characters after entities parsing
#: (core.telegram.org/bots/api#senddocument).
CAPTION_LIMIT = 1024


async def send_agreement(bot: Bot, message: Outgoing, locale: str) -> int:
    """Send both renderings; returns the message id of the last one (the captioned HTML)."""
    facts = message.facts
    if not isinstance(facts, AgreementFacts):
        raise TypeError(f"send_agreement needs AgreementFacts, got {type(facts).__name__}")
    sent_id = 0
    files = agreement_files(facts)
    for number, document in enumerate(files, start=1):
        caption = (
            fit(agreement_caption(facts, locale), CAPTION_LIMIT) if number == len(files) else None
        )
        upload = InputFile(document.text.encode("utf-8"), filename=document.filename)
        sent = await bot.send_document(message.to.chat_id, upload, caption=caption)
        sent_id = sent.message_id
    return sent_id
