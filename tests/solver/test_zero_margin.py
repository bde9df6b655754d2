"""An LP margin of rounding noise counts as none: twins are then asked at two points."""

import numpy as np
import pytest

import solver.planning
from solver.centre_prices import CentrePrices, largest_margin_prices
from solver.learning import ValueSet, default_box
from solver.planning import ZERO_MARGIN, centre_plan
from solver.problem import Problem
from solver.simulate import QuasiLinear

ROOMS = 3


def _ask(tenant: QuasiLinear, prices: tuple[int, ...], vs: ValueSet, said: dict) -> None:
    room = tenant.choose(prices, range(ROOMS), -1)
    vs.add(prices, room, range(ROOMS))
    said[prices] = room


def _twins_with_a_wide_interval() -> tuple[Problem, list[ValueSet], list[dict]]:
    """Twins worth (1200, 1000, 800).00, a third member (800, 900, 1300).00; at four common
    price lists the twins took room 0 or 1 and the third member room 2, which leaves the
    twins' v0 - v1 between 150.00 and 400.00: wider than a near-tie bridges."""
    problem = Problem(rent=300_000, rooms=("a", "b", "c"), members=("x", "y", "z"), tolerance=100)
    tenants = [QuasiLinear((120_000.0, 100_000.0, 80_000.0))] * 2
    tenants.append(QuasiLinear((80_000.0, 90_000.0, 130_000.0)))
    sets = [ValueSet(ROOMS) for _ in tenants]
    said: list[dict] = [{} for _ in tenants]
    for prices in ((100_000,) * 3, (130_000, 90_000, 80_000), (115_000, 100_000, 85_000)):
        for tenant, vs, memory in zip(tenants, sets, said, strict=True):
            _ask(tenant, prices, vs, memory)
    for tenant, vs, memory in zip(tenants, sets, said, strict=True):
        _ask(tenant, (110_000, 95_000, 95_000), vs, memory)
    return problem, sets, said


@pytest.mark.parametrize("noise", [0.0, 1e-12, -1e-12, 1e-9])
def test_a_margin_of_rounding_noise_still_asks_twins_at_two_points(
    noise: float, monkeypatch: pytest.MonkeyPatch
) -> None:
    """Twins who said the same have equal estimates, so the largest margin is 0; HiGHS may
    return it as a tiny positive number (seen: +7.6e-12), which must not turn the round into
    one at a common price list (where twins can only answer alike)."""

    def noisy(*args: object, **kwargs: object) -> CentrePrices:
        exact = largest_margin_prices(*args, **kwargs)  # type: ignore[arg-type]
        return CentrePrices(exact.assignment, exact.prices, exact.margin + noise)

    monkeypatch.setattr(solver.planning, "largest_margin_prices", noisy)
    problem, sets, said = _twins_with_a_wide_interval()
    boxes = [default_box(ROOMS, problem.rent)] * 3
    plan = centre_plan(problem, sets, boxes, (), said=said)
    estimates = np.array([vs.centre(boxes[0], problem.rent) for vs in sets])
    assert abs(largest_margin_prices(estimates, problem.rent, problem.floor).margin) <= ZERO_MARGIN
    assert plan.mode == "near-tie"
    a, b = plan.assignment[0], plan.assignment[1]
    assert {a, b} == {0, 1}
    differences = sorted(ask[0] - ask[1] for ask in plan.asks[:2])
    # thirds of [150.00, 400.00] (the probes of solver.twins), to a minor unit or so
    assert abs(differences[0] - 23_333) <= 2 and abs(differences[1] - 31_667) <= 2
    assert plan.asks[2] == plan.base
