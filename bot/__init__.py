"""Flatpact's chat side: round engine, storage, Telegram adapter and the local sandbox."""
