"""The Telegram adapter: updates in, engine events out; the outbox out, as Bot API calls.

The only part of the bot that imports ``telegram``. Handlers translate, delivery sends, texts
word the engine's plain-data messages, and the process settings come from ``FLATPACT_*``.
"""
