"""Tests of the local Bot API stand-in (bot/sandbox)."""
