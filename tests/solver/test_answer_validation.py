"""Answer validation in every offered-room situation: only offered rooms are accepted.

The boundary rule (F. E. Su, "Rental Harmony: Sperner's Lemma in Fair Division", Amer. Math.
Monthly 106, 1999, section 5: offered a room at the floor price, a member takes one of those)
is what the walk's termination guarantee rests on, so a question with several floor-priced
rooms offers exactly those rooms, and an answer naming any other room must be refused and
change nothing. The situations are visited by seeded walks on small meshes that start next to
the floor of all rooms but one and answer arbitrarily within the offered rooms (from the
middle of the grid, walks almost never reach a point with two floor rooms), with as many rooms
as members (floor 0 and rebates) and with empty rooms.
"""

import random
from collections import Counter

import pytest

from solver import InvalidAnswer, Options, Problem, Walk
from solver.prices import grid_prices

BAD_TYPES: tuple[object, ...] = (True, False, "0", 0.0, None)


def _problem(rooms: int, members: int, floor: int, mesh: int) -> Problem:
    # rent == mesh + members * floor keeps every grid price a whole number of units
    return Problem(
        rent=mesh + members * floor,
        rooms=[f"r{i}" for i in range(rooms)],
        members=[f"m{i}" for i in range(members)],
        tolerance=10**9,
        floor=floor,
    )


def _situation(problem: Problem, prices: tuple[int, ...]) -> str:
    at_floor = [j for j, p in enumerate(prices) if p == problem.floor]
    if len(at_floor) >= 2:
        return "only floor rooms"
    return "every room"


def _refuses_everything_not_offered(walk: Walk, question_id: str, choices: tuple[int, ...]) -> int:
    """Try every room that is not offered (and non-room values); each must change nothing."""
    before = walk.to_json()
    open_before = walk.open_questions()
    refused = 0
    not_offered = [r for r in range(-1, walk.problem.size + 1) if r not in choices]
    for room in [*not_offered, *BAD_TYPES]:
        with pytest.raises(InvalidAnswer) as caught:
            walk.answer(question_id, room)  # type: ignore[arg-type]
        assert "\n" not in str(caught.value)  # one line, in the member's terms
        assert walk.to_json() == before
        assert walk.open_questions() == open_before
        refused += 1
    return refused


def _run(problem: Problem, seed: int, look_ahead: bool) -> Counter[str]:
    """Walk to a proposal with arbitrary valid answers, testing refusals at every question."""
    rng = random.Random(seed)
    seen: Counter[str] = Counter()
    mesh = problem.budget
    near_floor = [1] * problem.size
    near_floor[rng.randrange(problem.size)] = mesh - problem.size + 1
    walk = Walk.start(
        problem,
        options=Options(first_mesh_per_room=mesh, infer_from_money=False, look_ahead=look_ahead),
        start_prices=grid_prices(problem, near_floor, mesh),
    )
    while walk.proposal() is None:
        for q in reversed(walk.open_questions()):  # look-ahead ones first, as people might
            if q not in walk.open_questions():
                continue
            floor_priced = tuple(j for j, p in enumerate(q.prices) if p == problem.floor)
            # what is offered, by the rule itself: the floor rooms if any, else every room
            assert q.choices == (floor_priced or tuple(range(problem.size)))
            kind = _situation(problem, q.prices)
            if problem.empty_count:
                kind += ", empty rooms"
            if problem.floor < 0:
                kind += ", rebates"
            if q != walk.open_questions()[0]:
                kind += ", look-ahead"
            seen[kind] += _refuses_everything_not_offered(walk, q.id, q.choices)
            walk.answer(q.id, rng.choice(q.choices))
            walk.check()
    return seen


@pytest.mark.parametrize(
    ("rooms", "members", "floor", "mesh"),
    [(4, 4, 0, 6), (5, 5, 0, 7), (4, 4, -1, 8), (4, 3, 0, 6), (5, 3, -1, 8)],
)
def test_only_offered_rooms_are_accepted(rooms: int, members: int, floor: int, mesh: int) -> None:
    problem = _problem(rooms, members, floor, mesh)
    seen: Counter[str] = Counter()
    for seed in range(40):
        seen += _run(problem, seed, look_ahead=seed % 2 == 1)
    suffix = (", empty rooms" if rooms > members else "") + (", rebates" if floor < 0 else "")
    # the walks did meet both situations, so the refusals above were really exercised
    assert seen[f"only floor rooms{suffix}"] > 0
    assert seen[f"every room{suffix}"] > 0
    assert seen[f"every room{suffix}, look-ahead"] > 0
    if rooms == 5:  # five rooms also reach look-ahead questions offering only floor rooms
        assert seen[f"only floor rooms{suffix}, look-ahead"] > 0
