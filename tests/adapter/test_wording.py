"""Our own words where people read them: the question, the state of a round, the caution.

Pure text checks on what the adapter renders from engine facts (no network). The rule that a
split is a suggestion, not legal or financial advice, is the project's own promise to its
users; every place that shows prices must carry it (the full form with a split, the short
form wherever prices are shown again).
"""

from __future__ import annotations

from dataclasses import replace

import pytest

from bot.adapter import help_texts, texts
from bot.rounds.caution import CAUTION, SHORT_CAUTION
from bot.rounds.messages import (
    AgreementFacts,
    AgreementLine,
    AnswerLine,
    DivisionFacts,
    DivisionLine,
    Kind,
    MyAnswersFacts,
    Outgoing,
    PromptFacts,
    QuestionFacts,
    Recipient,
    RoundFacts,
    StatusFacts,
    WaitingFacts,
)
from bot.rounds.phases import Phase

ROOMS = ("Bay window", "Box room", "Loft")
PRICES = (700_00, 450_00, 700_00)
TO = Recipient(-1, private=False)


def _division(kind: Kind) -> str:
    lines = tuple(
        DivisionLine(name, i, i, room, price)
        for i, (name, room, price) in enumerate(
            zip(("Ines", "Tomasz", "Aroha"), ROOMS, PRICES, strict=True)
        )
    )
    facts = DivisionFacts(1, 1, sum(PRICES), "EUR", 2, lines, 100, 0, 0, 3)
    return texts.render(Outgoing(TO, kind, facts), "en")


def test_the_question_opens_with_our_own_sentence() -> None:
    facts = QuestionFacts(1, "1:q1", ROOMS, PRICES, "EUR", 2, (0, 1, 2), 1)
    text = texts.render(Outgoing(Recipient(5, private=True), Kind.QUESTION, facts), "en")
    assert text.startswith("Question 1: at these prices, which room would you take?\n")
    assert "if the rent were split" not in text


@pytest.mark.parametrize("kind", [Kind.PROPOSAL, Kind.ACCEPTED, Kind.REMINDER, Kind.SETTLED])
def test_every_split_carries_the_full_caution(kind: Kind) -> None:
    assert CAUTION in _division(kind)


def test_prices_shown_again_carry_the_short_caution() -> None:
    prompt = PromptFacts(1, 1, ROOMS, PRICES, "EUR", 2, 0)
    assert SHORT_CAUTION in texts.render(
        Outgoing(Recipient(5, True), Kind.ROOM_PROMPT, prompt), "en"
    )
    line = AgreementLine("Ines", 5, 0, ROOMS[0], 700_00, 0, 1_767_225_600, PRICES)
    agreement = AgreementFacts(
        1, -1, 1_767_225_600, 1850_00, "EUR", 2, ROOMS, (), (line,), (), (), 0, 0, 100, 0
    )
    assert SHORT_CAUTION in texts.history([agreement], "en")
    mine = MyAnswersFacts(1, "EUR", 2, ROOMS, (AnswerLine(0, PRICES, "Loft", "answer"),))
    shown = texts.render(Outgoing(Recipient(5, True), Kind.MY_ANSWERS, mine), "en")
    assert SHORT_CAUTION in shown


@pytest.mark.parametrize("phase", list(Phase))
def test_people_never_see_internal_state_names(phase: Phase) -> None:
    facts = RoundFacts(1, -1, phase.value, 1850_00, "EUR", 2, ROOMS, 100, 0, ("Ines",))
    board = texts.board(StatusFacts(facts, 3, ()), "en")
    waiting = texts.render(
        Outgoing(TO, Kind.HOLD_UP, WaitingFacts(1, ("Ines",), phase.value, 0)), "en"
    )
    for text in (board, waiting):
        # Today's leaks were "The round is gathering." and "has been asking for a while".
        if phase.value != phase.in_words:  # "cancelled" is a plain word already
            assert f"is {phase.value}." not in text and f"been {phase.value} for" not in text
        assert "settled" not in text.lower()
    if phase not in (Phase.ASKING, Phase.PROPOSED, Phase.SETTLED):
        assert phase.in_words in board


def test_the_agreed_state_is_called_agreed() -> None:
    facts = RoundFacts(1, -1, Phase.SETTLED.value, 1850_00, "EUR", 2, ROOMS, 100, 0, ("Ines",))
    assert texts.board(StatusFacts(facts, 9, ()), "en").startswith("Done: everyone agreed")
    assert "Settled" not in _division(Kind.SETTLED)


@pytest.mark.parametrize("phase", list(Phase))
def test_the_live_status_keeps_what_the_start_of_asking_said(phase: Phase) -> None:
    started = replace(
        RoundFacts(1, -1, "asking", 1850_00, "EUR", 2, ROOMS, 100, 0, ("Ines",)),
        expected_rounds=3,
        lapses_at=1_767_225_600,  # 2026-01-01 00:00 UTC
    )
    facts = replace(started, phase=phase.value, expected_rounds=None, lapses_at=None)
    shown = texts.board(StatusFacts(facts, 3, ((7, "Ines"),)), "en", started)
    assert shown.startswith(texts.board(StatusFacts(facts, 3, ((7, "Ines"),)), "en"))
    assert "I assume that you would take a free room" in shown
    running = phase in (Phase.ASKING, Phase.PROPOSED)
    # The lapse date matters only while the round runs.
    assert ("If no split is agreed by 2026-01-01" in shown) is running


def test_help_is_short_and_setup_explains_every_option_in_one_line() -> None:
    from bot.rounds.setup_input import SETUP_OPTIONS

    short = help_texts.help_text()
    assert len(short.splitlines()) <= 6 and "/help setup" in short and SHORT_CAUTION in short
    setup = help_texts.help_text("setup")
    for option in SETUP_OPTIONS:
        line = next((ln for ln in setup.splitlines() if ln.startswith(f"; {option} ")), None)
        assert line is not None, option
        assert " - " in line  # the option, then what it means
    assert "below zero means the others pay you" in setup
    how = help_texts.help_text("how")
    assert "two assumptions" in how and CAUTION in how


def test_a_swap_request_is_one_line_in_the_group() -> None:
    # The settings and members are on the live status message already; repeating them with
    # every request to swap is what made the group chat noisy.
    facts = RoundFacts(1, -1, "asking", 1850_00, "EUR", 2, ROOMS, 100, 0, ("Ines",))
    text = texts.render(Outgoing(Recipient.group(-1), Kind.OBJECTION_NOTED, facts), "en")
    assert "\n" not in text and "Ines" not in text and "1,850" not in text
