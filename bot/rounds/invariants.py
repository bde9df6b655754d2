"""An invariant checker over a full dump of the store, run after every step in stress tests.

In the spirit of sortedcontainers' ``_check``: cheap to call, says exactly what is broken. It
works on the table dump (``SqliteStore.dump()``), so it judges what is *stored*, which is what
survives a restart.
"""

from __future__ import annotations

import json
from collections import Counter, defaultdict
from typing import Any

from bot.rounds.phases import ENDED_PHASES, OPEN_PHASES, Phase
from bot.rounds.question_ids import search_id
from bot.rounds.replay import kept_facts
from bot.rounds.round_settings import RoundSettings
from bot.rounds.search_steps import replay
from bot.rounds.searches import AnySearch, records_of
from solver import BrokenInvariant

Dump = dict[str, list[tuple[Any, ...]]]
#: Column of ``rounds.forgotten_at`` in a dump (added by migration 7, after the first eleven).
FORGOTTEN_AT = 11


def check_dump(dump: Dump) -> None:
    """Raise :class:`~solver.BrokenInvariant` naming the first broken rule."""
    members: defaultdict[int, list[tuple[Any, ...]]] = defaultdict(list)
    for row in dump["members"]:
        members[row[0]].append(row)
    questions: defaultdict[int, list[tuple[Any, ...]]] = defaultdict(list)
    for row in dump["questions"]:
        questions[row[0]].append(row)
    open_per_group = Counter(row[1] for row in dump["rounds"] if Phase(row[3]) in OPEN_PHASES)
    crowded = [group for group, count in open_per_group.items() if count > 1]
    _require(not crowded, f"groups {crowded} have more than one open round")
    steps: defaultdict[int, list[tuple[Any, ...]]] = defaultdict(list)
    for row in dump.get("search_steps", []):
        steps[row[0]].append(row)
    for row in dump["rounds"]:
        _check_round(row, members[row[0]], questions[row[0]], steps[row[0]])
    check_private_stays_private(dump)


def check_private_stays_private(dump: Dump) -> None:
    """A message meant for one person is only ever addressed to that person's chat."""
    for row in dump.get("outbox", []):
        outbox_id, chat_id, payload = row[0], row[3], json.loads(row[7])
        meant_for, private = payload["to"]
        _require(
            not private or chat_id == meant_for,
            f"outbox {outbox_id}: private message for {meant_for} is addressed to chat {chat_id}",
        )


def _check_round(
    row: tuple[Any, ...],
    members: list[tuple[Any, ...]],
    questions: list[tuple[Any, ...]],
    steps: list[tuple[Any, ...]],
) -> None:
    round_id, phase, settings = row[0], Phase(row[3]), RoundSettings.from_json(row[4])
    rooms = len(settings.rooms)
    _require(len(members) <= rooms, f"round {round_id} has more members than rooms")
    forgotten = len(row) > FORGOTTEN_AT and row[FORGOTTEN_AT] is not None
    if forgotten:  # the retention policy deleted its answers: only an ended round, all gone
        _require(phase in ENDED_PHASES, f"round {round_id} is {phase.value} but forgotten")
        _require(row[5] is None, f"round {round_id} is forgotten but keeps its walk")
        _require(not questions, f"round {round_id} is forgotten but keeps its questions")
        _require(not steps, f"round {round_id} is forgotten but keeps its search steps")
        accepted = [m for m in members if m[4] is not None]
        _require(
            phase is not Phase.SETTLED or len(accepted) == len(members),
            f"round {round_id} settled without every acceptance",
        )
        return
    if row[5] is None:
        _require(not questions, f"round {round_id} has questions but no walk")
        _require(not steps, f"round {round_id} has search steps but no snapshot")
        _require(
            phase not in (Phase.ASKING, Phase.PROPOSED, Phase.SETTLED),
            f"round {round_id} is {phase.value} without a walk",
        )
        return
    _require(
        len(members) == rooms or settings.fewest_members <= len(members) < rooms,
        f"round {round_id} asks with {len(members)} of {rooms}",
    )
    numbers = sorted(step[1] for step in steps)
    _require(
        numbers == list(range(1, len(steps) + 1)),
        f"round {round_id}: search steps numbered {numbers}, not 1..{len(steps)}",
    )
    # What survives a restart: the snapshot with its steps applied again.
    walk = replay(round_id, row[5], [step[2] for step in sorted(steps, key=lambda s: s[1])])
    room_rent = settings.room_rent(len(members))
    # With empty rooms the question prices list every room and need not add up to the rent.
    _check_questions(round_id, walk, questions, room_rent if len(members) == rooms else None)
    accepted = [m for m in members if m[4] is not None]
    if phase is Phase.ASKING:
        _require(walk.proposal() is None, f"round {round_id} is asking but the walk proposed")
        _require(not accepted, f"round {round_id} is asking but has acceptances")
    if phase in (Phase.PROPOSED, Phase.SETTLED):
        proposal = walk.proposal()
        _require(proposal is not None, f"round {round_id} is {phase.value} without a proposal")
        assert proposal is not None
        let = sum(proposal.prices[room] for room in proposal.assignment.values())
        _require(let == room_rent, f"round {round_id}: let rooms' prices != rent by rooms")
        shares = settings.shared_parts(len(members))
        _require(let + sum(shares) == settings.rent, f"round {round_id}: payments != total")
    if phase is Phase.SETTLED:
        _require(
            len(accepted) == len(members), f"round {round_id} settled without every acceptance"
        )


def _check_questions(
    round_id: int, search: AnySearch, questions: list[tuple[Any, ...]], rent: int | None
) -> None:
    open_ids = {q.id for q in search.open_questions()}
    stored_open = {search_id(q[1]) for q in questions if q[7] is None and q[9] is None}
    _require(
        stored_open <= open_ids,
        f"round {round_id}: stored open questions {stored_open} not open in the search {open_ids}",
    )
    for q in questions:
        prices = json.loads(q[3])
        _require(
            rent is None or sum(prices) == rent, f"round {round_id} question {q[1]}: prices != rent"
        )
    # Columns of the questions table: round_id, qid, user_id, prices, choices,
    # sent_message_id (no longer written), asked_at, answered_at, room, withdrawn_at.
    # Every stored answer is an answer the search holds (asked, or kept as a fact after a
    # change), and the other way round: who, at
    # which prices, which room (a multiset: the same question may come back in a later round).
    stored = Counter(
        (str(q[2]), tuple(json.loads(q[3])), q[8])
        for q in questions
        if q[7] is not None and q[9] is None  # answered, not set aside by a correction
    )
    held = Counter((r.member, r.prices, r.room) for r in records_of(search) if r.source == "asked")
    held.update((f.member, f.prices, f.room) for f in kept_facts(search))  # kept by a change
    _require(
        stored == held, f"round {round_id}: the search's answers and the stored answers differ"
    )


def _require(condition: bool, message: str) -> None:
    if not condition:
        raise BrokenInvariant(message)
