"""Exhaustive checks across a refinement: every answer sequence through two Merrill stages.

Each stage is a complete run of Merrill's restart method (O. H. Merrill, PhD thesis,
University of Michigan, 1972), so for *any* answers obeying the boundary rule (F. E. Su,
"Rental Harmony", Amer. Math. Monthly 106, 1999, section 5) every stage ends in a fully
labelled cell, and the last one within the tolerance or at the finest mesh, where the bound
is at most 2 minor units (``solver.problem.MIN_TOLERANCE``). On the smallest spaces we follow
every branch of the question tree: at each question, every offered room. Answers are reused
when the same member meets the same prices again, so each leaf is one labelling of the
prices the walk visited, and the leaves cover all of them.

The tolerance is 2 units on a rent of 32 with a first mesh of 4 (8 units per grid step), so
the first stage can never meet it and every leaf spans exactly two stages; the refinement
factor takes the second stage straight to one unit per step.
"""

import random
from collections.abc import Callable, Iterator

import pytest

from solver import Options, Problem, Walk
from solver.problem import MIN_TOLERANCE
from solver.simulate import QuasiLinear, Tenant, answer_until_proposal
from tests.solver.final_cell import candidates, check_evidence_sits_on_the_facet


def _problem(rooms: int, members: int, rent: int, floor: int = 0) -> Problem:
    return Problem(
        rent=rent,
        rooms=[f"r{i}" for i in range(rooms)],
        members=[f"m{i}" for i in range(members)],
        tolerance=MIN_TOLERANCE,
        floor=floor,
    )


def every_leaf(walk: Walk, finish: Callable[[Walk], None] | None = None) -> Iterator[Walk]:
    """Every finished walk reachable by answering each question with each offered room.

    With ``finish``, branching stops once the second stage has begun and ``finish`` answers
    the rest (used where the full tree is too large to enumerate).
    """
    walk.check()
    if walk.proposal() is not None:
        yield walk
        return
    if finish is not None and len(walk.stages) > 1:
        finish(walk)
        yield walk
        return
    (question,) = walk.open_questions()
    saved = walk.to_json()
    for room in question.choices:
        branch = Walk.from_json(saved)
        branch.answer(question.id, room)
        yield from every_leaf(branch, finish)


def _check_leaf(walk: Walk) -> None:
    problem = walk.problem
    proposal = walk.proposal()
    assert proposal is not None
    walk.check()
    # a fully labelled cell: one vertex per member, every room once
    assert sorted(e.member for e in proposal.evidence) == sorted(problem.members)
    rooms = sorted([*(e.room for e in proposal.evidence), *proposal.empty_rooms])
    assert rooms == list(range(problem.size))
    check_evidence_sits_on_the_facet(walk, proposal)
    assert proposal.envy_bound == min(c.bound for c in candidates(walk))
    # within the tolerance, or at the finest mesh where a vertex always achieves <= 2 units
    finest = walk.stages[-1].mesh == problem.budget
    assert proposal.envy_bound <= problem.tolerance or finest
    assert proposal.envy_bound <= MIN_TOLERANCE


@pytest.mark.parametrize(
    ("rent", "floor", "factor"),
    [(32, 0, 8), (24, -4, 8), (64, 0, 16)],  # floor 0, rebates, and a 16x refinement
)
@pytest.mark.parametrize("infer", [False, True])
def test_every_answer_sequence_two_rooms(rent: int, floor: int, factor: int, infer: bool) -> None:
    problem = _problem(2, 2, rent, floor)
    options = Options(first_mesh_per_room=2, factor=factor, infer_from_money=infer)
    leaves = list(every_leaf(Walk.start(problem, options=options)))
    for leaf in leaves:
        _check_leaf(leaf)
        assert [s.mesh for s in leaf.stages] == [4, problem.budget]
    # both rooms end up with each member somewhere in the tree, so the tree really branched
    outcomes = set()
    for leaf in leaves:
        proposal = leaf.proposal()
        assert proposal is not None
        outcomes.add(tuple(sorted(proposal.assignment.items())))
    assert len(outcomes) == 2
    # measured: 64 leaves without inference, 36 with it (128 / 68 at rent 64)
    assert len(leaves) >= 32


@pytest.mark.parametrize(("rooms", "members", "rent"), [(3, 3, 16), (3, 2, 16)])
def test_every_first_stage_then_sampled_second_stages_three_rooms(
    rooms: int, members: int, rent: int
) -> None:
    # Three rooms: the full two-stage tree has thousands of leaves (5891 at rent 8, measured),
    # so the first stage is enumerated exhaustively and each of its outcomes is followed into
    # the second stage with seeded arbitrary answers, several times.
    problem = _problem(rooms, members, rent)
    options = Options(first_mesh_per_room=1, factor=4)
    count = 0
    for seed in range(12):
        rng = random.Random(seed)

        def finish(walk: Walk, rng: random.Random = rng) -> None:
            while walk.proposal() is None:
                (q,) = walk.open_questions()
                walk.answer(q.id, rng.choice(q.choices))
                walk.check()

        for leaf in every_leaf(Walk.start(problem, options=options), finish):
            _check_leaf(leaf)
            assert [s.mesh for s in leaf.stages] == [4, 16]
            count += 1
    assert count >= 12 * 5


def test_every_pair_of_two_room_tastes() -> None:
    # Exhaustive over quasi-linear tastes on a grid: each member's value difference between
    # the rooms runs over -32..32 in steps of 2 (only differences matter when money counts
    # one-for-one). With |difference| <= rent, envy-free prices >= 0 exist (Svensson,
    # Econometrica 51, 1983, for existence; the floor does not bind at these differences),
    # and the true envy must stay within the certified bound and the tolerance.
    problem = _problem(2, 2, 32)
    options = Options(first_mesh_per_room=2, factor=8)
    differences = range(-32, 33, 2)
    for a in differences:
        for b in differences:
            tenants: dict[str, Tenant] = {
                "m0": QuasiLinear((100.0 + a, 100.0)),
                "m1": QuasiLinear((100.0 + b, 100.0)),
            }
            walk = Walk.start(problem, options=options)
            answer_until_proposal(walk, tenants)
            _check_leaf(walk)
            assert len(walk.stages) == 2
            proposal = walk.proposal()
            assert proposal is not None
            for member, room in proposal.assignment.items():
                envy = tenants[member].envy(proposal.prices, room)
                assert envy <= proposal.envy_bound <= problem.tolerance
