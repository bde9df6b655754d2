"""Flatpact's solver: envy-free rent division from "which room would you take?" answers.

Pure numerics: standard library and numpy only, no I/O. The public protocol is
``Problem``, ``Walk.start``, ``walk.open_questions()``, ``walk.answer()``, ``walk.proposal()``,
``walk.dispute()``, ``walk.to_json()`` / ``Walk.from_json()``.
"""

from solver.errors import BrokenInvariant, InvalidAnswer, InvalidProblem, InvalidState, SolverError
from solver.money import split_exactly
from solver.problem import Problem
from solver.walk import Counters, Evidence, Options, Proposal, Question, Walk

__all__ = [
    "BrokenInvariant",
    "Counters",
    "Evidence",
    "InvalidAnswer",
    "InvalidProblem",
    "InvalidState",
    "Options",
    "Problem",
    "Proposal",
    "Question",
    "SolverError",
    "Walk",
    "split_exactly",
]
