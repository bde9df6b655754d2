"""The solver's error hierarchy.

Every error says what was wrong *and* what to do about it, because the bot shows these
messages to people setting up a round.
"""

from __future__ import annotations


class SolverError(Exception):
    """Base class for everything the solver raises on purpose."""


class InvalidProblem(SolverError, ValueError):
    """The round's settings cannot be solved as given; the message says what to change."""


class InvalidAnswer(SolverError, ValueError):
    """An answer does not fit an open question; the walk is left unchanged."""


class InvalidState(SolverError, RuntimeError):
    """The walk is not in a phase where this call makes sense (e.g. disputing before a proposal)."""


class BrokenInvariant(SolverError, AssertionError):
    """An internal guarantee failed. This is a bug in Flatpact, never the user's fault."""
