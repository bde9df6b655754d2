"""The round lifecycle as an explicit state machine.

::

                 open-joining            begin-asking             walk-proposed
    [drafting] --------------> [gathering] ------------> [asking] -------------> [proposed]
        |                          |                      ^   |                    |   |
        |                          |                      |   |   objection-upheld |   |
        |                          |                      |   |   answer-changed   |   |
        |                          |                      |   +<-------------------+   |
        |                          |                      |                            |
        +------ cancel ------------+------ cancel --------+------ cancel --------------+
        |                          |                      |                            |
        +------ deadline-passed ---+-- deadline-passed ---+-- deadline-passed ---------+
                                                                                       |
           v cancel: [cancelled]      v deadline-passed: [lapsed]      all-accepted    v
                                                                                  [settled]

    [settled] --re-run--> a *new* round in [drafting] (same rent and rooms, editable;
                          members kept or replaced). The settled round itself never changes.

    [settled] --rent change--> a *new* round, created in [drafting] and moved at once by
                          rent-changed to [proposed]: same members and rooms, the agreed split
                          re-priced for the new total (bot/rounds/rent_change.py).

Drafting, gathering, asking and proposed are *open*: a group has at most one open round.
Settled, cancelled and lapsed are final.

:func:`transition` is pure: it knows nothing about who asked or what is stored, so it can be
tested exhaustively; permissions and preconditions live in the engine.
"""

from __future__ import annotations

from enum import Enum

from bot.rounds.errors import IllegalMove


class Phase(Enum):
    """Where a round is. The values are stored in the database; never rename them."""

    DRAFTING = "drafting"
    GATHERING = "gathering"
    ASKING = "asking"
    PROPOSED = "proposed"
    SETTLED = "settled"
    CANCELLED = "cancelled"
    LAPSED = "lapsed"

    @property
    def is_open(self) -> bool:
        """Open rounds block a new round in the same group."""
        return self in OPEN_PHASES

    @property
    def in_words(self) -> str:
        """Where the round is, as people read it ("the round is ..."); never the stored name.

        The stored values are internal; people see these phrases (settled rounds are shown
        as *agreed*).
        """
        return _IN_WORDS[self]


_IN_WORDS = {
    Phase.DRAFTING: "still being set up",
    Phase.GATHERING: "still collecting members",
    Phase.ASKING: "asking its questions",
    Phase.PROPOSED: "waiting for everyone to agree to the suggested split",
    Phase.SETTLED: "agreed by everyone",
    Phase.CANCELLED: "cancelled",
    Phase.LAPSED: "closed because it ran out of time",
}


class Step(Enum):
    """What happens to a round; each is an edge label in the diagram above."""

    OPEN_JOINING = "open-joining"
    BEGIN_ASKING = "begin-asking"
    WALK_PROPOSED = "walk-proposed"
    OBJECTION_UPHELD = "objection-upheld"
    ANSWER_CHANGED = "answer-changed"
    ALL_ACCEPTED = "all-accepted"
    CANCEL = "cancel"
    DEADLINE_PASSED = "deadline-passed"
    RENT_CHANGED = "rent-changed"


OPEN_PHASES = frozenset({Phase.DRAFTING, Phase.GATHERING, Phase.ASKING, Phase.PROPOSED})
#: Phases a round ends in (agreed, cancelled, lapsed): nothing changes it any more.
ENDED_PHASES = frozenset(Phase) - OPEN_PHASES
#: Phases a re-run may start from.
RERUN_FROM = frozenset({Phase.SETTLED})

_EDGES: dict[tuple[Phase, Step], Phase] = {
    (Phase.DRAFTING, Step.OPEN_JOINING): Phase.GATHERING,
    (Phase.GATHERING, Step.BEGIN_ASKING): Phase.ASKING,
    (Phase.ASKING, Step.WALK_PROPOSED): Phase.PROPOSED,
    (Phase.PROPOSED, Step.OBJECTION_UPHELD): Phase.ASKING,
    (Phase.PROPOSED, Step.ANSWER_CHANGED): Phase.ASKING,
    (Phase.PROPOSED, Step.ALL_ACCEPTED): Phase.SETTLED,
    (Phase.DRAFTING, Step.RENT_CHANGED): Phase.PROPOSED,
}
for _open in OPEN_PHASES:
    _EDGES[(_open, Step.CANCEL)] = Phase.CANCELLED
    _EDGES[(_open, Step.DEADLINE_PASSED)] = Phase.LAPSED

_WHAT_NOW: dict[Phase, str] = {
    Phase.DRAFTING: "the round is still being set up; the admin opens it for joining next",
    Phase.GATHERING: "members are still joining; the admin starts the questions when all are in",
    Phase.ASKING: "questions are being answered; wait for the proposal",
    Phase.PROPOSED: "a division is proposed; members accept it or object",
    Phase.SETTLED: "the round is settled; the admin can re-run it to start a new one",
    Phase.CANCELLED: "the round was cancelled; start a new round to try again",
    Phase.LAPSED: "the round ran out of time; start a new round to try again",
}


def transition(phase: Phase, step: Step) -> Phase:
    """The phase after ``step``; raises :class:`IllegalMove` saying what is possible instead."""
    try:
        return _EDGES[(phase, step)]
    except KeyError:
        raise IllegalMove(
            f"cannot {step.value.replace('-', ' ')} now: {_WHAT_NOW[phase]}"
        ) from None


def allowed_steps(phase: Phase) -> frozenset[Step]:
    """The steps legal from ``phase`` (for tests and for help texts)."""
    return frozenset(step for (source, step) in _EDGES if source is phase)
