"""The round engine and its domain: events in, messages out, one transaction in between.

Imports :mod:`solver` and nothing of Telegram or of a particular database: storage is reached
through the port in :mod:`bot.rounds.store_port`, and outgoing messages are plain data
(:mod:`bot.rounds.messages`) that the adapter words and sends.
"""
