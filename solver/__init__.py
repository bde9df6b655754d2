"""Flatpact's solver: envy-free rent division from "which room would you take?" answers.

Pure numerics: standard library, numpy and scipy, no I/O. The documented entry point is
``solver.start(problem, method="parallel" | "walk", ...)`` and ``solver.resume(text)``; both
methods satisfy the ``Search`` protocol: ``open_questions()``, ``answer()``, ``proposal()``,
``dispute()``, ``counters``, ``questions_per_member()``, ``check()``, ``to_json()``. The
parallel search adds ``round_number``, ``expected_rounds()`` and ``close_round()``.
``solver.add_facts`` gives a parallel search answers given at other prices (kept after a
changed answer). ``Walk.start`` keeps working as before.
"""

from solver.errors import BrokenInvariant, InvalidAnswer, InvalidProblem, InvalidState, SolverError
from solver.money import split_exactly
from solver.parallel import ParallelSearch
from solver.parallel_facts import Fact, add_facts
from solver.problem import Problem
from solver.rounds import ParallelOptions
from solver.search import Search, resume, start
from solver.search_checks import exact_certificate
from solver.walk import Counters, Evidence, Options, Proposal, Question, Walk

__all__ = [
    "BrokenInvariant",
    "Counters",
    "Evidence",
    "Fact",
    "InvalidAnswer",
    "InvalidProblem",
    "InvalidState",
    "Options",
    "ParallelOptions",
    "ParallelSearch",
    "Problem",
    "Proposal",
    "Question",
    "Search",
    "SolverError",
    "Walk",
    "add_facts",
    "exact_certificate",
    "resume",
    "split_exactly",
    "start",
]
