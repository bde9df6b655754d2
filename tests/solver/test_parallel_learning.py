"""What answers teach about values: the polytope keeps the truth; contradictions are exact."""

import random

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from solver.learning import CENTRE_SLACK, ValueSet, default_box, prior_box
from solver.simulate import QuasiLinear


def _prices(rng: random.Random, n: int, rent: int) -> tuple[int, ...]:
    cuts = sorted(rng.randrange(rent + 1) for _ in range(n - 1))
    return tuple(b - a for a, b in zip([0, *cuts], [*cuts, rent], strict=True))


@settings(max_examples=60, deadline=None)
@given(n=st.integers(2, 8), seed=st.integers(0, 10**6), answers=st.integers(1, 25))
def test_polytope_always_contains_a_quasi_linear_tenants_values(
    n: int, seed: int, answers: int
) -> None:
    rng = random.Random(seed)
    rent = 300_000
    values = tuple(rng.uniform(0, rent) for _ in range(n))  # any values; only differences count
    tenant = QuasiLinear(values)
    learned = ValueSet(n)
    for _ in range(answers):
        prices = _prices(rng, n, rent)
        floor_offer = rng.random() < 0.2 and min(prices) == 0
        choices = tuple(j for j in range(n) if prices[j] == 0) if floor_offer else tuple(range(n))
        room = tenant.choose(prices, choices, 0)
        learned.add(prices, room, choices)
        assert learned.contains(values)
        assert learned.contains([v + 12_345.0 for v in values])  # a common shift changes nothing
        assert learned.consistent()
    # the estimate lies inside the polytope (relaxed by the centre's half unit) and the box
    box = default_box(n, rent)
    centre = learned.centre(box, rent)
    assert abs(float(np.sum(centre)) - rent) < 1e-6 * rent
    assert learned.contains(centre, slack=CENTRE_SLACK + 1e-6)


def test_the_centre_of_nothing_learned_is_the_box_centre() -> None:
    # by symmetry the analytic centre of the box [0, 2 * rent / n]^n within sum == rent is the equal
    # share; around rough values it is the rough values shifted to sum to the rent
    learned = ValueSet(4)
    assert np.allclose(learned.centre(default_box(4, 1000), 1000), [250] * 4)
    rough = [400.0, 300.0, 200.0, 50.0]
    assert np.allclose(learned.centre(prior_box(rough, 1000), 1000), [412.5, 312.5, 212.5, 62.5])


def test_a_contradiction_is_detected_exactly() -> None:
    learned = ValueSet(3)
    learned.add((100, 100, 100), 0, (0, 1, 2))  # v0 >= v1, v0 >= v2
    learned.add((90, 110, 100), 1, (0, 1, 2))  # v1 - 110 >= v0 - 90: v1 >= v0 + 20
    assert not learned.consistent()
    indifferent = ValueSet(2)
    indifferent.add((100, 100), 0, (0, 1))
    indifferent.add((100, 100), 1, (0, 1))  # exactly indifferent: consistent, width 0
    assert indifferent.consistent()
    assert indifferent.width(0, 1) == 0
    assert indifferent.centre(default_box(2, 200), 200) is not None


def test_rough_values_never_overrule_answers() -> None:
    # rough values say room 0 is worth far more; the answers say room 1 is worth more
    learned = ValueSet(2)
    learned.add((100, 150), 1, (0, 1))  # v1 - v0 >= 50
    centre = learned.centre(prior_box([240.0, 10.0], 250), 250)
    assert centre[1] - centre[0] >= 50 - CENTRE_SLACK
