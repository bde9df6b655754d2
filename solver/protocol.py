"""The walk's protocol types: options, questions, log records, evidence and proposals.

Plain frozen data shared by the walk, the simulations and the bot; JSON round trips live next
to each type so a saved walk reads back exactly.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any, Literal

from solver.triangulation import Vertex

Source = Literal["asked", "rule", "repeat", "implied", "objection", "earlier"]


@dataclass(frozen=True, slots=True)
class Options:
    """Per-round knobs: how the walk refines, and whether it may infer answers from money.

    ``infer_from_money`` assumes that a member's view of a room depends only on that room's
    price (no externalities) and that cheaper is never worse: then a member who took room
    ``r`` at prices ``p`` takes ``r`` again wherever ``r`` is no dearer and every other room
    no cheaper, and we need not ask.

    ``look_ahead`` lets idle members answer in parallel: while one member's question is open,
    the walk guesses that member's answer (their most recent room) and asks the owner of the
    vertex the walk would reach next. A right guess saves a waiting round; a wrong one costs a
    question, and the unanswered guess is withdrawn.
    """

    first_mesh_per_room: int = 4
    factor: int | None = None
    infer_from_money: bool = True
    look_ahead: bool = False

    def refinement_factor(self, rooms: int) -> int:
        """How much finer each restart is: 4 up to four rooms, 3 above (measured best with
        ``python -m solver.bench``: a stage's path grows with the factor and the room count)."""
        if self.factor is not None:
            return self.factor
        return 4 if rooms <= 4 else 3

    def first_mesh(self, rooms: int, budget: int) -> int:
        """The coarsest mesh: at least ``rooms + 1`` and never finer than one minor unit."""
        return min(max(self.first_mesh_per_room * rooms, rooms + 1), budget)

    def to_dict(self) -> dict[str, int | bool | None]:
        return {
            "first_mesh_per_room": self.first_mesh_per_room,
            "factor": self.factor,
            "infer_from_money": self.infer_from_money,
            "look_ahead": self.look_ahead,
        }


@dataclass(frozen=True, slots=True)
class Question:
    """One private question: "at these prices, which room would you take?"."""

    id: str
    member: str
    prices: tuple[int, ...]
    choices: tuple[int, ...]


@dataclass(frozen=True, slots=True)
class Record:
    """One entry of the walk's log: a label and where it came from."""

    seq: int
    stage: int
    member: str
    prices: tuple[int, ...]
    room: int
    source: Source
    vertex: Vertex | None

    def to_list(self) -> list[Any]:
        vertex = list(self.vertex) if self.vertex is not None else None
        return [
            self.seq,
            self.stage,
            self.member,
            list(self.prices),
            self.room,
            self.source,
            vertex,
        ]

    @classmethod
    def from_list(cls, data: Sequence[Any]) -> Record:
        seq, stage, member, prices, room, source, vertex = data
        return cls(
            seq,
            stage,
            member,
            tuple(prices),
            room,
            source,
            tuple(vertex) if vertex is not None else None,
        )


@dataclass(frozen=True, slots=True)
class Evidence:
    """Why a member's room is theirs: at ``prices`` (their vertex) they took ``room``."""

    member: str
    room: int
    prices: tuple[int, ...]
    source: Source


@dataclass(frozen=True, slots=True)
class Proposal:
    """A division: who takes which room at which price, with the evidence behind it.

    ``prices`` lists every room; the let rooms' prices sum exactly to the rent. A room in
    ``empty_rooms`` is not let: its price is the one at which nobody would rather move there.
    """

    assignment: Mapping[str, int]
    prices: tuple[int, ...]
    evidence: tuple[Evidence, ...]
    envy_bound: int
    mesh: int
    empty_rooms: tuple[int, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        return {
            "empty_rooms": list(self.empty_rooms),
            "assignment": dict(self.assignment),
            "prices": list(self.prices),
            "evidence": [[e.member, e.room, list(e.prices), e.source] for e in self.evidence],
            "envy_bound": self.envy_bound,
            "mesh": self.mesh,
        }

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> Proposal:
        return cls(
            assignment=dict(data["assignment"]),
            prices=tuple(data["prices"]),
            evidence=tuple(Evidence(m, r, tuple(p), s) for m, r, p, s in data["evidence"]),
            envy_bound=data["envy_bound"],
            mesh=data["mesh"],
            empty_rooms=tuple(data["empty_rooms"]),
        )


@dataclass(frozen=True, slots=True)
class Stage:
    """One Merrill restart: its mesh and the target grid point of its start layer."""

    mesh: int
    target: tuple[int, ...]


@dataclass(slots=True)
class Counters:
    """Running totals for reports and benchmarks."""

    asked: int = 0
    inferred: int = 0
    reused: int = 0
    implied: int = 0
    steps: int = 0


@dataclass(slots=True)
class OpenQuestion:
    """An open question and the vertex whose label it will be."""

    question: Question
    vertex: Vertex
    seq: int

    def to_dict(self) -> dict[str, Any]:
        q = self.question
        return {
            "id": q.id,
            "member": q.member,
            "prices": list(q.prices),
            "choices": list(q.choices),
            "vertex": list(self.vertex),
            "seq": self.seq,
        }

    @classmethod
    def from_dict(cls, p: dict[str, Any]) -> OpenQuestion:
        question = Question(p["id"], p["member"], tuple(p["prices"]), tuple(p["choices"]))
        return cls(question, tuple(p["vertex"]), p["seq"])
