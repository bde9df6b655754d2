"""The parallel search: a whole round of questions at once, learning between rounds.

A *round* asks every member one private question at once: "at these prices, which room
would you take?". In an ordinary round every member sees the same price list (whole minor
units; the let rooms sum exactly to the rent; every room above the floor). If everyone takes a
different room, that is a fully labelled cell whose vertices all coincide, and the division is
envy-free *exactly*, by the members' own answers at exactly the proposed prices, whatever
their tastes: the proposal has envy bound 0 and evidence "at exactly these prices you chose
this room". A certificate is claimed only then (or, in a near-tie round, with the bound that
:func:`solver.envy.envy_bound` computes from the answers; see :mod:`solver.near_ties`).

Between rounds the search learns (:mod:`solver.planning`): under the stated assumption that
money counts one-for-one it keeps, per member, the values consistent with their answers and
asks next at the middle of the estimates' envy-free region. Answers no such values explain
switch the search to model-free price adjustment. After ``max_rounds`` rounds it hands over
to :class:`solver.walk.Walk`, started at the last prices with every answer passed on, so the
walk's termination guarantee holds; from then on the object behaves as the walk (one question
at a time, each counting as a round), except that the walk's proposal is first confirmed by
one round at exactly its prices (:mod:`solver.confirm`).

Rounds and slow members. A round ends when every member has answered it, or when an admin
calls :meth:`close_round`. A member who has not answered keeps their question open (same id,
same prices); it is carried into the next round. When they answer it, the answer is learned
and they are asked the current round's question. Rounds with partial answers cannot certify,
but their answers are learned.

State. The search is a pure function of its inputs (problem, options, rough values, earlier
answers) and the ordered event log (answers, round closures, objections): :meth:`to_json`
stores those plus the price plans already made, and :meth:`from_json` replays the log. The
plans are stored so that a restart on a machine whose floating point differs in the last bit
still shows members exactly the questions they were shown; :meth:`replay` recomputes
everything from the log alone (tests check that both agree).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import replace

from solver import parallel_saved as saved
from solver.envy import Choice, envy_bound
from solver.errors import InvalidAnswer, InvalidState
from solver.hand_over import HandedOver, check_room
from solver.labelling import floor_rooms
from solver.learning import Box, ValueSet, default_box, prior_box
from solver.planning import adjust_plan, centre_plan
from solver.problem import Problem
from solver.protocol import Counters, Evidence, Proposal, Question, Record, Source
from solver.rounds import Event, ParallelOptions, Plan
from solver.search_checks import check_parallel
from solver.walk import Walk

FORMAT_NAME = saved.FORMAT_NAME
Earlier = Mapping[str, Sequence[tuple[Sequence[int], int]]]
#: Median rounds by room count (``python -m solver.bench --rounds``), without / with rough values.
#: 4, 6, 8 and 10 rooms from 200 seeds; 2, 3, 5, 7 and 9 from 40 seeds.
TYPICAL = {2: 4, 3: 5, 4: 8, 5: 11, 6: 11, 7: 12, 8: 13, 9: 14, 10: 14}
TYPICAL_ROUGH = {2: 1, 3: 1, 4: 3, 5: 4, 6: 5, 7: 6, 8: 7, 9: 7, 10: 8}


class ParallelSearch:
    """Whole rounds of questions with learning in between. Create with :meth:`start`."""

    def __init__(
        self,
        problem: Problem,
        options: ParallelOptions,
        rough: Sequence[Sequence[float]] | None,
        earlier: Earlier,
        stored_plans: Sequence[Plan] = (),
    ) -> None:
        self.problem = problem
        self.options = options
        self.rough = [list(map(float, r)) for r in rough] if rough is not None else None
        self.earlier = {m: [(tuple(p), r) for p, r in said] for m, said in earlier.items()}
        self.records: list[Record] = []
        self.plans: list[Plan] = []
        self.log: list[Event] = []
        self.after: HandedOver | None = None
        self._stored = list(stored_plans)
        self._open: dict[str, tuple[int, Question]] = {}  # member -> (round, question)
        self._round_picks: dict[str, int] = {}
        self._proposal: Proposal | None = None
        self._values = [ValueSet(problem.size) for _ in problem.members]
        self._memory: dict[str, dict[tuple[int, ...], int]] = {}
        self._answers_this_round = 0

    # ----------------------------------------------------------------- construction

    @classmethod
    def start(
        cls,
        problem: Problem,
        *,
        options: ParallelOptions | None = None,
        rough_values: Sequence[Sequence[float]] | None = None,
        earlier: Earlier | None = None,
    ) -> ParallelSearch:
        """Begin: ``rough_values[member][room]`` (optional) only steer the first estimates;
        ``earlier`` answers of staying members (``(prices, room)`` pairs) count as answers."""
        search = cls(problem, options or ParallelOptions(), rough_values, earlier or {})
        search.begin()
        return search

    def begin(self) -> None:
        """Validate the inputs, record earlier answers and ask the first round (once)."""
        if self.plans or self.records:
            raise InvalidState("this search has begun already")
        n, m = self.problem.size, len(self.problem.members)
        if self.rough is not None and (
            len(self.rough) != m or any(len(row) != n for row in self.rough)
        ):
            raise InvalidAnswer(f"rough values need {m} rows of {n} amounts, one per room")
        for member, said in self.earlier.items():
            if member not in self.problem.members:
                raise InvalidAnswer(f"earlier answers name {member!r}, who is not in this round")
            for prices, room in said:
                if len(prices) != n or not 0 <= room < n:
                    raise InvalidAnswer(f"an earlier answer of {member!r} does not fit these rooms")
                self._record(member, prices, room, "earlier", tuple(range(n)))
        self._next_round()

    # ----------------------------------------------------------------- public protocol

    @property
    def walk(self) -> Walk | None:
        """The walk after a hand-over, else ``None``."""
        return self.after.walk if self.after is not None else None

    @property
    def round_number(self) -> int:
        """The current round, 1-based (after the hand-over every walk question is a round)."""
        if self.after is not None:
            return len(self.plans) + max(self.after.rounds(), 1)
        return len(self.plans)

    def expected_rounds(self) -> int:
        """About how many rounds the whole search takes, for telling people what to expect.

        Before a proposal: the typical count for this many rooms (with or without rough
        values; the medians of ``python -m solver.bench --rounds``), never less than the
        current round plus one. After the hand-over to the walk every question is a round,
        and a warm-started walk typically needs about ten questions per room. With a
        proposal: the current round.
        """
        if self.proposal() is not None:
            return self.round_number
        n = self.problem.size
        if self.walk is not None:
            typical = len(self.plans) + 10 * n
        elif self.rough is not None:
            typical = TYPICAL_ROUGH[n]
        else:
            typical = TYPICAL[n]
        return max(typical, self.round_number + 1)

    def open_questions(self) -> list[Question]:
        """The questions waiting for an answer: one per member who still has to answer."""
        if self.after is not None:
            return self.after.open_questions()
        order = self.problem.members
        return [q for _, q in sorted(self._open.values(), key=lambda o: order.index(o[1].member))]

    def answer(self, question_id: str, room_index: int) -> None:
        """Record an answer (any order); bad ids or rooms raise and change nothing."""
        if self.after is not None:
            self.after.answer(question_id, room_index)
            self.log.append(("answer", question_id, room_index))
            return
        found = next((o for o in self._open.values() if o[1].id == question_id), None)
        if found is None:
            raise InvalidAnswer(
                f"question {question_id!r} is not open (it was answered already, withdrawn "
                "or never asked); answer one of the open questions instead"
            )
        round_no, question = found
        check_room(room_index, question.choices)
        self.log.append(("answer", question_id, room_index))
        del self._open[question.member]
        self._answers_this_round += 1
        self._record(
            question.member, question.prices, room_index, "asked", question.choices, round_no
        )
        if round_no == len(self.plans):
            self._round_picks[question.member] = room_index
        else:  # a carried question: now ask this member the current round's question
            self._ask(self.problem.members.index(question.member))
        self._maybe_finish_round()

    def close_round(self) -> None:
        """An admin ends the round with the answers in; the others' questions stay open."""
        if self.walk is not None:
            raise InvalidState("the search now asks one question at a time; there is no round")
        if self._proposal is not None:
            raise InvalidState("there is a proposal already; agree to it or object to it")
        if not self._answers_this_round:
            raise InvalidState("nobody has answered this round yet; wait for a first answer")
        self.log.append(("close",))
        self._next_round()

    def proposal(self) -> Proposal | None:
        """The proposed division once found, else ``None``."""
        return self.after.confirmed if self.after is not None else self._proposal

    def dispute(self, member: str, room_index: int) -> None:
        """``member`` would rather take ``room_index`` at the proposed prices: a fact; go on."""
        if self.after is not None:
            self.after.dispute(member, room_index)
            self.log.append(("dispute", member, room_index))
            return
        proposal = self._proposal
        if proposal is None:
            raise InvalidState("there is no proposal to object to yet; answer the open questions")
        if member not in proposal.assignment:
            raise InvalidAnswer(f"{member!r} is not a member of this round")
        check_room(room_index, tuple(range(self.problem.size)))
        if room_index == proposal.assignment[member]:
            raise InvalidAnswer(
                "that is the room already proposed for this member; to object, name the room "
                "they would rather take at the proposed prices"
            )
        self.log.append(("dispute", member, room_index))
        everything = tuple(range(self.problem.size))
        self._record(member, proposal.prices, room_index, "objection", everything)
        self._proposal = None
        self._next_round()

    @property
    def counters(self) -> Counters:
        """Questions asked (open included), answers by the boundary rule, reused answers;
        ``steps`` counts rounds."""
        records = self.all_records()
        c = Counters(steps=self.round_number)
        c.asked = sum(r.source == "asked" for r in records) + len(self.open_questions())
        c.inferred = sum(r.source == "rule" for r in records)
        c.reused = sum(r.source == "repeat" for r in records)
        c.implied = sum(r.source == "implied" for r in records)
        return c

    def questions_per_member(self) -> dict[str, int]:
        """How many questions each member has been asked (open ones included)."""
        counts = dict.fromkeys(self.problem.members, 0)
        for r in self.all_records():
            if r.source == "asked":
                counts[r.member] += 1
        for q in self.open_questions():
            counts[q.member] += 1
        return counts

    def all_records(self) -> list[Record]:
        """Every label: this search's own, then the walk's after a hand-over (renumbered)."""
        if self.after is None:
            return list(self.records)
        later = self.after.records()
        start = len(self.records)
        return self.records + [replace(r, seq=start + k + 1) for k, r in enumerate(later)]

    def check(self) -> None:
        """Invariant checker (cheap; tests call it after every step): see
        :func:`solver.search_checks.check_parallel`."""
        check_parallel(self)

    # ----------------------------------------------------------------- rounds

    def _maybe_finish_round(self) -> None:
        while (
            self.walk is None
            and self._proposal is None
            and len(self._round_picks) == len(self.problem.members)
        ):
            if self._certify():
                return
            self._next_round()

    def _certify(self) -> bool:
        """Propose when every member chose a different room at this round's prices."""
        plan, members = self.plans[-1], self.problem.members
        picks = self._round_picks
        if len(set(picks.values())) != len(members):
            return False
        if sum(plan.base[r] for r in picks.values()) != self.problem.rent:
            return False
        choices = [Choice(m, picks[m], plan.asks[i]) for i, m in enumerate(members)]
        bound = envy_bound(choices, plan.base)
        if bound > self.problem.tolerance:
            return False
        evidence = tuple(
            Evidence(m, picks[m], plan.asks[i], self._source_of(m)) for i, m in enumerate(members)
        )
        taken = set(picks.values())
        self._proposal = Proposal(
            assignment=dict(picks),
            prices=plan.base,
            evidence=evidence,
            envy_bound=bound,
            mesh=0,
            empty_rooms=tuple(j for j in range(self.problem.size) if j not in taken),
        )
        return True

    def _source_of(self, member: str) -> Source:
        stage = len(self.plans)
        return next(
            r.source for r in reversed(self.records) if r.member == member and r.stage == stage
        )

    def _next_round(self) -> None:
        """Plan the next round (or hand over) and ask it."""
        if len(self.plans) >= self.options.max_rounds:
            self._hand_over()
            return
        last_picks = {self.problem.members.index(m): r for m, r in self._round_picks.items()}
        if len(self.plans) < len(self._stored):
            plan = self._stored[len(self.plans)]
        elif not all(vs.consistent() for vs in self._values):
            last = self.plans[-1] if self.plans else self._first_centre()
            steps = sum(p.mode == "adjust" for p in self.plans)
            plan = adjust_plan(self.problem, last, last_picks, steps)
        else:
            plan = centre_plan(
                self.problem,
                self._values,
                self._boxes(),
                {p.base for p in self.plans},
                second_stage=self.rough is not None,
                said=[self._memory.get(m, {}) for m in self.problem.members],
            )
        self.plans.append(plan)
        self._round_picks = {}
        self._answers_this_round = 0
        for i in range(len(self.problem.members)):
            self._ask(i)
        self._maybe_finish_round()

    def _first_centre(self) -> Plan:
        fresh = [ValueSet(self.problem.size) for _ in self.problem.members]
        return centre_plan(self.problem, fresh, self._boxes(), ())

    def _boxes(self) -> list[Box]:
        if self.rough is None:
            return [default_box(self.problem.size, self.problem.rent)] * len(self.problem.members)
        return [prior_box(row, self.problem.rent) for row in self.rough]

    def _ask(self, index: int) -> None:
        """Open member ``index``'s question of the current round, unless it needs no asking."""
        member = self.problem.members[index]
        if member in self._open:  # a carried question is answered first
            return
        prices = self.plans[-1].asks[index]
        choices = floor_rooms([p - self.problem.floor for p in prices]) or tuple(
            range(self.problem.size)
        )
        known = self._memory.get(member, {}).get(prices)
        source: Source
        if len(choices) == 1:
            room, source = choices[0], "rule"
        elif known is not None and known in choices:
            room, source = known, "repeat"
        else:
            question = Question(f"r{len(self.plans)}-{index + 1}", member, prices, choices)
            self._open[member] = (len(self.plans), question)
            return
        self._record(member, prices, room, source, choices)
        self._round_picks[member] = room

    def _hand_over(self) -> None:
        """Start the walk at the last prices with every answer passed on."""
        earlier: dict[str, list[tuple[tuple[int, ...], int]]] = {}
        for r in self.records:
            if r.source in ("asked", "objection", "earlier"):
                earlier.setdefault(r.member, []).append((r.prices, r.room))
        start = self.plans[-1].base if self.plans else None
        self._open = {}
        walk = Walk.start(self.problem, start_prices=start, earlier=earlier)
        self.after = HandedOver(self.problem, walk, len(self.plans))

    def _record(
        self,
        member: str,
        prices: Sequence[int],
        room: int,
        source: Source,
        choices: Sequence[int],
        stage: int | None = None,
    ) -> None:
        seq = len(self.records) + 1
        stage = len(self.plans) if stage is None else stage
        self.records.append(Record(seq, stage, member, tuple(prices), room, source, None))
        self._memory.setdefault(member, {})[tuple(prices)] = room
        self._values[self.problem.members.index(member)].add(prices, room, choices)

    # ----------------------------------------------------------------- persistence

    def to_json(self) -> str:
        """Inputs, event log and plans; :meth:`from_json` continues exactly where it was."""
        return saved.dump(self)

    @classmethod
    def from_json(cls, text: str) -> ParallelSearch:
        """Restore a search saved by :meth:`to_json` (replays its log over the stored plans)."""
        return saved.load(cls, text, use_plans=True)

    @classmethod
    def replay(cls, text: str) -> ParallelSearch:
        """Recompute a saved search from its inputs and log alone (ignoring stored plans)."""
        return saved.load(cls, text, use_plans=False)
