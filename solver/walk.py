"""The walk: path following through the restart prism, one private question at a time.

Method. Each *stage* works at one mesh ``N`` of the price grid (see
:mod:`solver.triangulation`). It is Merrill's restart method (O. H. Merrill, PhD thesis,
University of Michigan, 1972; M. J. Todd, "The Computation of Fixed Points and Applications",
1976, ch. 5): a prism ``simplex x [0, 1]`` is triangulated; level 0 carries artificial labels
that point at a *target* price vector and have exactly one fully labelled cell
(:mod:`solver.labelling`), level 1 carries the members' answers, asked as needed. A *door* is
a facet of a prism cell whose ``n`` vertices carry all ``n`` room labels. The walk enters the
prism through the unique door of level 0 and repeatedly leaves the current cell through its
other door (every cell has zero or two doors; the new vertex duplicates exactly one label,
and the door opposite the older duplicate is the way on), as in the classical proof of
Sperner's lemma (E. Sperner, Abh. Math. Sem. Hamburg 6, 1928) and Scarf's and Kuhn's
algorithms. Cells are finite and no cell is entered twice, so the walk stops at a door on the
prism's boundary. That door is not on level 0 (the only level-0 door is where we came in) and
not on a side ``{x[i] = 0} x [0, 1]``: on a side every vertex prices room ``i`` at the floor, and
with the boundary rule every label is a floor room of its vertex; showing all ``n`` labels
would need every room at the floor somewhere in one cell, so every coordinate would be at most
one grid step and ``sum(x) = N <= n``, but stages use ``N > n``. Hence the walk ends on level 1,
in a cell of the members' simplex whose ``n`` vertices have ``n`` different owners (one per
member) and ``n`` different rooms: a candidate division. This holds for *any* answers that obey
the boundary rule (F. E. Su, "Rental Harmony", Amer. Math. Monthly 106, 1999, for the rule).

Refinement. The found cell certifies an envy bound (:mod:`solver.envy`). If the bound exceeds
the round's tolerance, the walk restarts at a mesh ``factor`` times finer, with the target at
the best point of the found cell. Each restart is again a complete Merrill stage, so the
termination guarantee holds stage by stage; the mesh is capped at one minor unit, where the
bound is at most 2 units (the minimum tolerance), so refinement ends too.

Questions. A level-1 vertex is answered by its owner. It costs no question when exactly one
room is at the floor (the boundary rule decides) or when the same member already answered at
exactly the same prices (the answer is reused). When several rooms are at the floor the member
chooses among those rooms only.
"""

from __future__ import annotations

import json
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from fractions import Fraction
from typing import Any

from solver.envy import Choice, best_point
from solver.errors import BrokenInvariant, InvalidAnswer, InvalidState
from solver.labelling import floor_rooms, start_cell, start_label, valid_target
from solver.prices import equal_split, grid_prices, settle_prices, target_near
from solver.problem import Problem, is_placeholder
from solver.protocol import (
    Counters,
    Evidence,
    OpenQuestion,
    Options,
    Proposal,
    Question,
    Record,
    Source,
    Stage,
)
from solver.triangulation import Cell, Vertex, check_cell, level, owner_index, top_facet, x_from_s

__all__ = ["Counters", "Evidence", "Options", "Proposal", "Question", "Walk", "grid_prices"]

FORMAT_NAME = "flatpact-walk"
FORMAT_VERSION = 1


@dataclass
class Walk:
    """A resumable envy-free rent-division walk. Create with :meth:`start`."""

    problem: Problem
    options: Options
    stages: list[Stage]
    cell: Cell
    entering: int
    records: list[Record] = field(default_factory=list)
    pending: OpenQuestion | None = None
    ahead: dict[str, OpenQuestion] = field(default_factory=dict)
    proposed: Proposal | None = None
    next_seq: int = 1
    steps: int = 0
    _labels: dict[Vertex, int] = field(default_factory=dict, repr=False)
    _memory: dict[str, dict[tuple[int, ...], int]] = field(default_factory=dict, repr=False)
    _last_room: dict[str, int] = field(default_factory=dict, repr=False)

    # ----------------------------------------------------------------- public protocol

    @classmethod
    def start(
        cls,
        problem: Problem,
        *,
        options: Options | None = None,
        start_prices: Sequence[int] | None = None,
        earlier: Mapping[str, Sequence[tuple[Sequence[int], int]]] | None = None,
    ) -> Walk:
        """Begin a walk.

        ``start_prices`` (ints summing to the rent) only steers the start. ``earlier`` gives,
        per staying member, answers from a previous round of the same rooms as
        ``(prices, room)`` pairs: they are reused where the prices coincide and, with
        ``infer_from_money``, wherever monotonicity in money decides (a room that got no
        dearer while every other room got no cheaper stays chosen).
        """
        options = options or Options()
        mesh = options.first_mesh(problem.size, problem.budget)
        centre = tuple(start_prices) if start_prices is not None else equal_split(problem)
        if (
            len(centre) != problem.size
            or min(centre) < problem.floor
            or (not problem.empty_count and sum(centre) != problem.rent)
        ):
            raise InvalidAnswer(
                f"start prices must list {problem.size} amounts of at least the floor that "
                f"sum to {problem.rent}"
            )
        stage = Stage(mesh, target_near(problem, centre, mesh))
        walk = cls(problem, options, [stage], start_cell(stage.target, mesh), problem.size)
        for member, said in (earlier or {}).items():
            walk._take_earlier(member, said)
        walk._advance()
        walk._look_ahead()
        return walk

    def open_questions(self) -> list[Question]:
        """Questions waiting for an answer: the walk's own, then any look-ahead questions."""
        main = [self.pending.question] if self.pending is not None else []
        return main + [p.question for p in sorted(self.ahead.values(), key=lambda p: p.seq)]

    def answer(self, question_id: str, room_index: int) -> None:
        """Record an answer and advance; bad input raises and changes nothing.

        A question that was withdrawn (a look-ahead guess that turned out wrong) or answered
        already is "not open"; the caller should tell the member it is no longer needed.
        """
        pending = self.pending
        if pending is not None and pending.question.id == question_id:
            self._check_room(room_index, pending.question.choices)
            self.pending = None
            q = pending.question
            self._record(q.member, q.prices, room_index, "asked", pending.vertex, pending.seq)
            self._advance()
        elif question_id in self.ahead:
            early = self.ahead[question_id]
            self._check_room(room_index, early.question.choices)
            del self.ahead[question_id]
            q = early.question
            self._record(q.member, q.prices, room_index, "asked", None, early.seq)
        else:
            raise InvalidAnswer(
                f"question {question_id!r} is not open (it was answered already, withdrawn "
                "or never asked); answer one of the open questions instead"
            )
        self._look_ahead()

    def proposal(self) -> Proposal | None:
        """The proposed division once the walk has found one, else ``None``."""
        return self.proposed

    def dispute(self, member: str, room_index: int) -> None:
        """``member`` would rather take ``room_index`` at the proposed prices: walk on."""
        proposal = self.proposed
        if proposal is None:
            raise InvalidState("there is no proposal to object to yet; answer the open questions")
        if member not in proposal.assignment:
            raise InvalidAnswer(f"{member!r} is not a member of this round")
        self._check_room(room_index, tuple(range(self.problem.size)))
        if room_index == proposal.assignment[member]:
            raise InvalidAnswer(
                "that is the room already proposed for this member; to object, name the room "
                "they would rather take at the proposed prices"
            )
        self._record(member, proposal.prices, room_index, "objection", None)
        self.proposed = None
        self._restart(proposal.prices)
        self._advance()
        self._look_ahead()

    @property
    def counters(self) -> Counters:
        """Questions asked, answers inferred by the boundary rule, reused answers, steps."""
        c = Counters(steps=self.steps)
        for r in self.records:
            if r.source == "asked":
                c.asked += 1
            elif r.source == "rule":
                c.inferred += 1
            elif r.source == "repeat":
                c.reused += 1
            elif r.source == "implied":
                c.implied += 1
        c.asked += (self.pending is not None) + len(self.ahead)
        return c

    def questions_per_member(self) -> dict[str, int]:
        """How many questions each member has been asked (open ones included)."""
        counts = dict.fromkeys(self.problem.members, 0)
        for r in self.records:
            if r.source == "asked":
                counts[r.member] += 1
        for open_question in self.open_questions():
            counts[open_question.member] += 1
        return counts

    def check(self) -> None:
        """Invariant checker (tests call it after every step; cheap enough to call often).

        The current cell lies in the prism, its facet opposite the entering vertex is a door
        (all ``n`` rooms as labels), an open question sits on the entering vertex and is asked
        of that vertex's owner at that vertex's prices, and a proposal is a bijection whose
        prices sum to the rent and respect the floor.
        """
        stage = self.stages[-1]
        check_cell(self.cell, stage.mesh)
        if not valid_target(stage.target, stage.mesh):
            raise BrokenInvariant(f"stage target {stage.target} is not a valid start")
        vertices = self.cell.vertices()
        door = [self._label(v) for i, v in enumerate(vertices) if i != self.entering]
        if self.proposed is None and sorted(lab for lab in door if lab is not None) != list(
            range(self.problem.size)
        ):
            raise BrokenInvariant(f"the facet we entered through is not a door: {door}")
        if self.pending is not None:
            vertex = vertices[self.entering]
            question = self.pending.question
            if self.pending.vertex != vertex:
                raise BrokenInvariant("the open question is not at the entering vertex")
            if question.member != self.problem.agents[owner_index(vertex)]:
                raise BrokenInvariant("the open question is addressed to the wrong member")
            if question.prices != grid_prices(
                self.problem, x_from_s(vertex, stage.mesh), stage.mesh
            ):
                raise BrokenInvariant("the open question shows the wrong prices")
        if self.proposed is not None:
            _check_proposal(self.problem, self.proposed)
        askees = [q.member for q in self.open_questions()]
        if len(askees) != len(set(askees)):
            raise BrokenInvariant(f"a member has two open questions: {askees}")
        seqs = [r.seq for r in self.records]
        if len(seqs) != len(set(seqs)):
            raise BrokenInvariant("two log entries share a sequence number")

    # ----------------------------------------------------------------- the path

    def _advance(self) -> None:
        """Follow doors until a question is needed or a proposal is made."""
        while self.pending is None and self.proposed is None:
            vertices = self.cell.vertices()
            if self._label(vertices[self.entering]) is None and not self._ask_or_infer(
                vertices[self.entering]
            ):
                return
            drop = self._exit(self.cell, self.entering, [self._label(v) for v in vertices])
            exit_facet = [v for i, v in enumerate(vertices) if i != drop]
            if top_facet(exit_facet):
                self._finish_stage(exit_facet)
                continue
            self._pivot(drop)

    def _exit(self, cell: Cell, entering: int, labels: Sequence[int | None]) -> int:
        """The vertex to drop: the older of the two vertices sharing the entering label."""
        twins = [i for i, lab in enumerate(labels) if lab == labels[entering]]
        if len(twins) != 2 or len(set(labels)) != self.problem.size or None in labels:
            raise BrokenInvariant(f"cell {cell} with labels {labels} is not a door pair")
        return twins[0] if twins[1] == entering else twins[1]

    def _pivot(self, drop: int) -> None:
        mesh = self.stages[-1].mesh
        self.cell = self.cell.pivot(drop)
        check_cell(self.cell, mesh)
        self.entering = _entering_after(drop, self.problem.size)
        self.steps += 1

    def _label(self, vertex: Vertex) -> int | None:
        """The label of a vertex if known: artificial on level 0, an answer on level 1."""
        if level(vertex) == 0:
            stage = self.stages[-1]
            return start_label(x_from_s(vertex, stage.mesh), stage.target)
        return self._labels.get(vertex)

    def _question_at(self, vertex: Vertex) -> tuple[str, tuple[int, ...], tuple[int, ...]]:
        """Who would be asked at a level-1 vertex, at which prices, offered which rooms."""
        stage = self.stages[-1]
        x = x_from_s(vertex, stage.mesh)
        at_floor = floor_rooms(x)
        choices = at_floor or tuple(range(self.problem.size))
        member = self.problem.agents[owner_index(vertex)]
        return member, grid_prices(self.problem, x, stage.mesh), choices

    def _answer_without_asking(self, vertex: Vertex) -> tuple[int, Source] | None:
        """The label of a level-1 vertex if the rule, a repeat or monotonicity decides it."""
        member, prices, choices = self._question_at(vertex)
        if len(choices) == 1:
            return choices[0], "rule"
        if is_placeholder(member):  # an empty room's placeholder takes the cheapest room
            return min(choices, key=lambda j: (prices[j], j)), "rule"
        said = self._memory.get(member, {})
        known = said.get(prices)
        if known is not None and known in choices:
            return known, "repeat"
        implied = _implied_choice(said, prices, choices) if self.options.infer_from_money else None
        return (implied, "implied") if implied is not None else None

    def _ask_or_infer(self, vertex: Vertex) -> bool:
        """Label a level-1 vertex without asking if possible; otherwise open a question."""
        member, prices, choices = self._question_at(vertex)
        free = self._answer_without_asking(vertex)
        if free is not None:
            self._record(member, prices, free[0], free[1], vertex)
            return True
        early = next((p for p in self.ahead.values() if p.question.member == member), None)
        if early is not None:
            del self.ahead[early.question.id]
            if early.question.prices == prices:  # the look-ahead guessed right: promote it
                self.pending = OpenQuestion(early.question, vertex, early.seq)
                return False
        seq = self._take_seq()
        self.pending = OpenQuestion(Question(f"q{seq}", member, prices, choices), vertex, seq)
        return False

    def _look_ahead(self) -> None:
        """Keep at most one look-ahead question open: at the vertex after the guessed answer."""
        guess = self._guess_next() if self.options.look_ahead else None
        for qid, early in list(self.ahead.items()):
            if guess is None or early.vertex != guess:
                del self.ahead[qid]  # withdrawn: the walk will not go there next
        if guess is None or any(p.vertex == guess for p in self.ahead.values()):
            return
        member, prices, choices = self._question_at(guess)
        seq = self._take_seq()
        self.ahead[f"q{seq}"] = OpenQuestion(
            Question(f"q{seq}", member, prices, choices), guess, seq
        )

    def _guess_next(self) -> Vertex | None:
        """The next vertex needing a question if the open question gets its likely answer."""
        pending = self.pending
        if pending is None:
            return None
        guess = self._last_room.get(pending.question.member)
        if guess is None or guess not in pending.question.choices:
            return None
        assumed = {pending.vertex: guess}
        cell, entering = self.cell, self.entering
        for _ in range(8 * self.problem.size):  # a few free steps at most, then give up
            vertices = cell.vertices()
            labels: list[int | None] = []
            for v in vertices:
                label = assumed.get(v, self._label(v))
                if label is None:
                    free = self._answer_without_asking(v)
                    label = free[0] if free is not None else None
                labels.append(label)
            if labels[entering] is None:
                member = self.problem.agents[owner_index(vertices[entering])]
                return vertices[entering] if member != pending.question.member else None
            drop = self._exit(cell, entering, labels)
            if top_facet([v for i, v in enumerate(vertices) if i != drop]):
                return None
            cell, entering = cell.pivot(drop), _entering_after(drop, self.problem.size)
        return None

    def _take_earlier(self, member: str, said: Sequence[tuple[Sequence[int], int]]) -> None:
        if member not in self.problem.members:
            raise InvalidAnswer(f"earlier answers name {member!r}, who is not in this round")
        for prices, room in said:
            if len(prices) != self.problem.size or not 0 <= room < self.problem.size:
                raise InvalidAnswer(f"an earlier answer of {member!r} does not fit these rooms")
            self._record(member, tuple(prices), room, "earlier", None)

    def _take_seq(self) -> int:
        seq = self.next_seq
        self.next_seq += 1
        return seq

    def _record(
        self,
        member: str,
        prices: tuple[int, ...],
        room: int,
        source: Source,
        vertex: Vertex | None,
        seq: int | None = None,
    ) -> None:
        """Append to the log (the single source of truth) and learn from the entry."""
        if seq is None:
            seq = self._take_seq()
        record = Record(seq, len(self.stages) - 1, member, prices, room, source, vertex)
        self.records.append(record)
        self._learn(record)

    def _learn(self, record: Record) -> None:
        if record.vertex is not None and record.stage == len(self.stages) - 1:
            self._labels[record.vertex] = record.room
        if record.source in ("asked", "objection", "earlier"):
            self._memory.setdefault(record.member, {})[record.prices] = record.room
            self._last_room[record.member] = record.room

    # ----------------------------------------------------------------- stages

    def _finish_stage(self, facet: Sequence[Vertex]) -> None:
        stage = self.stages[-1]
        evidence = [self._evidence(v) for v in facet]
        members = [e for e in evidence if not is_placeholder(e.member)]
        empty = tuple(sorted(e.room for e in evidence if is_placeholder(e.member)))
        choices = [Choice(e.member, e.room, e.prices) for e in members]
        points = [x_from_s(v, stage.mesh) for v in facet]
        centre = tuple(
            sum((Fraction(c) for c in coord), Fraction(0)) / len(points)
            for coord in zip(*points, strict=True)
        )
        where: list[Sequence[int | Fraction]] = [centre, *points]
        candidates = [settle_prices(self.problem, p, stage.mesh, empty) for p in where]
        point, bound = best_point(choices, candidates)
        if bound <= self.problem.tolerance or stage.mesh >= self.problem.budget:
            order = self.problem.members
            self.proposed = Proposal(
                assignment={e.member: e.room for e in members},
                prices=point,
                evidence=tuple(sorted(members, key=lambda e: order.index(e.member))),
                envy_bound=bound,
                mesh=stage.mesh,
                empty_rooms=empty,
            )
            return
        self._restart(point)

    def _evidence(self, vertex: Vertex) -> Evidence:
        stage_no = len(self.stages) - 1
        for r in reversed(self.records):
            if r.stage == stage_no and r.vertex == vertex:
                return Evidence(r.member, r.room, r.prices, r.source)
        raise BrokenInvariant(f"vertex {vertex} of the final cell has no recorded answer")

    def _restart(self, centre: tuple[int, ...]) -> None:
        """Start a new Merrill stage at a finer mesh, aimed at ``centre``."""
        mesh = min(
            self.stages[-1].mesh * self.options.refinement_factor(self.problem.size),
            self.problem.budget,
        )
        stage = Stage(mesh, target_near(self.problem, centre, mesh))
        self.stages.append(stage)
        self.cell = start_cell(stage.target, mesh)
        self.entering = self.problem.size
        self._labels = {}

    # ----------------------------------------------------------------- helpers

    def _check_room(self, room_index: object, choices: tuple[int, ...]) -> None:
        if not isinstance(room_index, int) or isinstance(room_index, bool):
            raise InvalidAnswer(f"a room is given by its number, not {room_index!r}")
        if room_index not in choices:
            allowed = ", ".join(str(c) for c in choices)
            raise InvalidAnswer(f"room {room_index} is not one of the offered rooms ({allowed})")

    # ----------------------------------------------------------------- persistence

    def to_json(self) -> str:
        """The whole walk as JSON text; :meth:`from_json` continues exactly where it was."""
        data = {
            "format": FORMAT_NAME,
            "version": FORMAT_VERSION,
            "problem": self.problem.to_dict(),
            "options": self.options.to_dict(),
            "stages": [[s.mesh, list(s.target)] for s in self.stages],
            "cell": {"base": list(self.cell.base), "steps": list(self.cell.steps)},
            "entering": self.entering,
            "records": [r.to_list() for r in self.records],
            "pending": self.pending.to_dict() if self.pending is not None else None,
            "ahead": [p.to_dict() for p in self.ahead.values()],
            "proposal": self.proposed.to_dict() if self.proposed is not None else None,
            "next_seq": self.next_seq,
            "steps": self.steps,
        }
        return json.dumps(data, separators=(",", ":"))

    @classmethod
    def from_json(cls, text: str) -> Walk:
        """Restore a walk saved by :meth:`to_json`."""
        try:
            data = json.loads(text)
            if data.get("format") != FORMAT_NAME or data.get("version") != FORMAT_VERSION:
                raise InvalidState(
                    f"saved walk has format {data.get('format')!r} version "
                    f"{data.get('version')!r}; this Flatpact reads {FORMAT_NAME} v{FORMAT_VERSION}"
                )
            walk = cls._from_data(data)
        except (KeyError, TypeError, ValueError) as exc:
            if isinstance(exc, InvalidState):
                raise
            raise InvalidState(f"saved walk is damaged and cannot be resumed: {exc}") from exc
        return walk

    @classmethod
    def _from_data(cls, data: dict[str, Any]) -> Walk:
        problem = Problem.from_dict(data["problem"])
        walk = cls(
            problem=problem,
            options=Options(**data["options"]),
            stages=[Stage(m, tuple(t)) for m, t in data["stages"]],
            cell=Cell(tuple(data["cell"]["base"]), tuple(data["cell"]["steps"])),
            entering=data["entering"],
            next_seq=data["next_seq"],
            steps=data["steps"],
        )
        for item in data["records"]:
            record = Record.from_list(item)
            walk.records.append(record)
            walk._learn(record)
        if data["pending"] is not None:
            walk.pending = OpenQuestion.from_dict(data["pending"])
        for item in data["ahead"]:
            early = OpenQuestion.from_dict(item)
            walk.ahead[early.question.id] = early
        if data["proposal"] is not None:
            walk.proposed = Proposal.from_dict(data["proposal"])
        stage = walk.stages[-1]
        check_cell(walk.cell, stage.mesh)
        return walk


# --------------------------------------------------------------------- helpers


def _entering_after(drop: int, size: int) -> int:
    """Where the new vertex sits after Kuhn's pivot drops vertex ``drop`` of a ``size``-cell."""
    return {0: size, size: 0}.get(drop, drop)


def _implied_choice(
    said: Mapping[tuple[int, ...], int], prices: tuple[int, ...], choices: tuple[int, ...]
) -> int | None:
    """A room the member must take at ``prices``, by monotonicity in money, if any.

    They took ``r`` at ``p``; at ``prices`` room ``r`` is no dearer and every other room is no
    cheaper, so (no externalities, cheaper never worse) ``r`` is still their choice.
    """
    for earlier, room in said.items():
        if (
            room in choices
            and prices[room] <= earlier[room]
            and all(
                q >= p for j, (q, p) in enumerate(zip(prices, earlier, strict=True)) if j != room
            )
        ):
            return room
    return None


def _check_proposal(problem: Problem, proposal: Proposal) -> None:
    rooms = sorted([*proposal.assignment.values(), *proposal.empty_rooms])
    if sorted(proposal.assignment) != sorted(problem.members) or rooms != list(range(problem.size)):
        raise BrokenInvariant(f"assignment {dict(proposal.assignment)} is not a bijection")
    let = sum(proposal.prices[r] for r in proposal.assignment.values())
    if let != problem.rent or min(proposal.prices) < problem.floor:
        raise BrokenInvariant(f"prices {proposal.prices} break the rent or the floor")
