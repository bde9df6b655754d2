"""The round state machine, checked exhaustively against the diagram written out by hand."""

from __future__ import annotations

import itertools

import pytest

from bot.rounds.errors import IllegalMove
from bot.rounds.phases import Phase, Step, allowed_steps, transition

OPEN = [Phase.DRAFTING, Phase.GATHERING, Phase.ASKING, Phase.PROPOSED]
# The diagram in bot/rounds/phases.py, transcribed edge by edge (independent of _EDGES).
EXPECTED = {
    (Phase.DRAFTING, Step.OPEN_JOINING): Phase.GATHERING,
    (Phase.GATHERING, Step.BEGIN_ASKING): Phase.ASKING,
    (Phase.ASKING, Step.WALK_PROPOSED): Phase.PROPOSED,
    (Phase.PROPOSED, Step.OBJECTION_UPHELD): Phase.ASKING,
    (Phase.PROPOSED, Step.ANSWER_CHANGED): Phase.ASKING,
    (Phase.PROPOSED, Step.ALL_ACCEPTED): Phase.SETTLED,
    # [settled] --rent change--> a new round: drafting, then at once proposed (re-priced split)
    (Phase.DRAFTING, Step.RENT_CHANGED): Phase.PROPOSED,
    **{(p, Step.CANCEL): Phase.CANCELLED for p in OPEN},
    **{(p, Step.DEADLINE_PASSED): Phase.LAPSED for p in OPEN},
}


@pytest.mark.parametrize(("phase", "step"), list(itertools.product(Phase, Step)))
def test_every_pair_is_either_an_edge_or_refused(phase: Phase, step: Step) -> None:
    if (phase, step) in EXPECTED:
        assert transition(phase, step) is EXPECTED[(phase, step)]
        assert step in allowed_steps(phase)
    else:
        with pytest.raises(IllegalMove, match="cannot"):
            transition(phase, step)
        assert step not in allowed_steps(phase)


def test_final_phases_have_no_way_out() -> None:
    for phase in (Phase.SETTLED, Phase.CANCELLED, Phase.LAPSED):
        assert allowed_steps(phase) == frozenset()
        assert not phase.is_open
