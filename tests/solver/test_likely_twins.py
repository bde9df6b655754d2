"""Likely twins: who counts, and the near-tie round that starts earlier only for them."""

from hypothesis import example, given, settings
from hypothesis import strategies as st

from solver.learning import ValueSet, default_box
from solver.planning import centre_plan
from solver.problem import Problem
from solver.twins import SEEN_ALIKE, likely_twins
from tests.solver.test_twins import ROOMS, _one_taste_explains

Answers = list[tuple[tuple[int, ...], int]]
prices_st = st.sampled_from([(0, 0, 0), (10, 0, 0), (5, 0, 0), (0, 25, 5), (40, 10, 0), (5, 5, 30)])


def _sets(*said: Answers) -> list[ValueSet]:
    sets = [ValueSet(ROOMS) for _ in said]
    for vs, answers in zip(sets, said, strict=True):
        for prices, room in answers:
            vs.add(prices, room, range(ROOMS))
    return sets


@settings(max_examples=120, deadline=None)
@given(
    first=st.lists(st.tuples(prices_st, st.integers(0, ROOMS - 1)), max_size=4),
    second=st.lists(st.tuples(prices_st, st.integers(0, ROOMS - 1)), max_size=4),
)
# alike at two common price lists, but v0 - v1 >= 10 for one and <= 5 for the other
@example(
    first=[((0, 0, 0), 0), ((0, 25, 5), 0), ((10, 0, 0), 0)],
    second=[((0, 0, 0), 0), ((0, 25, 5), 0), ((5, 0, 0), 1)],
)
def test_likely_twins_took_the_same_room_at_enough_common_prices_and_fit_one_taste(
    first: Answers, second: Answers
) -> None:
    # the definition restated independently: the common price lists counted by hand, and
    # "one taste explains both" by a feasibility LP in scipy's HiGHS (test_twins)
    sets = _sets(first, second)
    if not (sets[0].consistent() and sets[1].consistent()):
        return
    said = [dict(first), dict(second)]  # the last answer at a price list counts, as in the search
    common = [p for p in said[0] if p in said[1]]
    alike = len(common) >= SEEN_ALIKE and all(said[0][p] == said[1][p] for p in common)
    expected = alike and _one_taste_explains(first + second)
    assert likely_twins(sets, said) == ({0, 1} if expected else set())


def _pinned_between_one_and_two_tolerances() -> tuple[Problem, list[ValueSet], list[Answers]]:
    """Two members who both said: room 0 at equal prices, room 1 once room 0 is dearer by 150:
    0 <= v0 - v1 <= 150, pinned closer than two tolerances (200) but not one (100)."""
    problem = Problem(rent=2000, rooms=("a", "b"), members=("x", "y"), tolerance=100)
    answers: Answers = [((1000, 1000), 0), ((1075, 925), 1)]
    sets = [ValueSet(2), ValueSet(2)]
    for vs in sets:
        for prices, room in answers:
            vs.add(prices, room, (0, 1))
    return problem, sets, [answers, answers]


def test_likely_twins_get_a_near_tie_round_once_pinned_within_two_tolerances() -> None:
    problem, sets, said = _pinned_between_one_and_two_tolerances()
    boxes = [default_box(2, problem.rent)] * 2
    plan = centre_plan(problem, sets, boxes, (), said=[dict(a) for a in said])
    assert plan.mode == "near-tie"
    assert len(set(plan.asks)) == 2  # each member at their own prices


def test_others_keep_a_common_price_list_until_pinned_within_one_tolerance() -> None:
    # the same bounds without answers at common prices: not likely twins, so the round is
    # still asked at one price list (which, if it ends the round, certifies exactly)
    problem, sets, _ = _pinned_between_one_and_two_tolerances()
    boxes = [default_box(2, problem.rent)] * 2
    plan = centre_plan(problem, sets, boxes, (), said=[{}, {}])
    assert plan.mode == "centre"
    assert len(set(plan.asks)) == 1
