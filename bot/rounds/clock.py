"""Time as an argument: the engine never reads the wall clock inside its logic.

Everything in the database is whole seconds since the Unix epoch (UTC), so comparisons are
plain integer comparisons and tests can drive a :class:`ManualClock`.
"""

from __future__ import annotations

from datetime import UTC, datetime, timedelta
from typing import Protocol


class Clock(Protocol):
    """Anything that says what time it is, as epoch seconds."""

    def __call__(self) -> int: ...


def system_clock() -> int:
    """The real clock, for the adapter's edge only."""
    return int(datetime.now(UTC).timestamp())


class ManualClock:
    """A clock that only moves when told to; deterministic tests and simulations use it."""

    def __init__(self, start: int = 1_767_225_600) -> None:  # 2026-01-01T00:00:00Z
        self.now = start

    def __call__(self) -> int:
        return self.now

    def advance(self, by: timedelta | int) -> int:
        """Move forward by ``by`` (seconds or a timedelta) and return the new time."""
        seconds = int(by.total_seconds()) if isinstance(by, timedelta) else by
        if seconds < 0:
            raise ValueError("a clock never goes backwards; pass a positive step")
        self.now += seconds
        return self.now
