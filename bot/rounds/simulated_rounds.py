"""Simulated rounds through the engine: invented flatmates press the buttons the engine sends.

Used by the tests and the benchmark. Tenants come from :mod:`solver.simulate` (they answer
"which room at these prices?" from private values); everything else is the real engine on a
real store. ``after_step`` runs after every event, so callers can check invariants or even
swap :attr:`Rehearsal.engine` for a freshly built one (restart tests).
"""

from __future__ import annotations

from collections import deque
from collections.abc import Awaitable, Callable, Mapping, Sequence
from dataclasses import dataclass, field

from bot.rounds.engine import Engine
from bot.rounds.errors import FlatpactError
from bot.rounds.events import Actor, BeginAsking, Configure, Event, Join, OpenJoining, Press
from bot.rounds.messages import (
    Action,
    Choice,
    DivisionFacts,
    Kind,
    Outgoing,
    ProgressFacts,
    QuestionFacts,
)
from bot.rounds.setup_input import SetupInput
from solver.simulate import Tenant

StepHook = Callable[["Rehearsal", Event, list[Outgoing]], Awaitable[None]]


class RehearsalStuck(FlatpactError):
    """The simulated round stopped making progress: a bug in the engine, never the tenants."""


@dataclass
class Rehearsal:
    """One group's simulated round; ``tenants`` are keyed by ``str(user_id)``."""

    engine: Engine
    group_id: int
    admin: Actor
    members: Sequence[Actor]
    tenants: Mapping[str, Tenant]
    floor: int = 0
    after_step: StepHook | None = None
    key_prefix: str = "r"
    events: int = 0
    answers: int = 0
    log: list[Outgoing] = field(default_factory=list)
    withdrawn: set[str] = field(default_factory=set)

    async def send(self, event: Event) -> list[Outgoing]:
        out = await self.engine.handle(event)
        self.events += 1
        self.log.extend(out)
        self.withdrawn.update(
            m.facts.question_ref
            for m in out
            if m.kind is Kind.WITHDRAWN
            and isinstance(m.facts, ProgressFacts)
            and m.facts.question_ref is not None
        )
        if self.after_step is not None:
            await self.after_step(self, event, out)
        return out

    def key(self) -> str:
        return f"{self.key_prefix}-{self.group_id}-{self.events}"

    async def set_up(
        self, rent: str, rooms: Sequence[str], *, one_by_one: bool = False
    ) -> list[Outgoing]:
        """Draft, open, let every member join and start the questions (everyone at once,
        round by round, unless ``one_by_one`` asks for the walk)."""
        setup = SetupInput.parse(rent, rooms, one_by_one=one_by_one)
        out = await self.send(Configure(self.key(), self.group_id, self.admin, setup))
        out += await self.send(OpenJoining(self.key(), self.group_id, self.admin))
        for member in self.members:
            out += await self.send(Join(self.key(), self.group_id, member))
        out += await self.send(BeginAsking(self.key(), self.group_id, self.admin))
        return out

    async def play(self, outbox: Sequence[Outgoing], *, limit: int = 20_000) -> DivisionFacts:
        """Answer every question and accept every proposal until the round is settled."""
        queue = deque(outbox)
        while queue:
            message = queue.popleft()
            if message.kind is Kind.SETTLED:
                assert isinstance(message.facts, DivisionFacts)
                return message.facts
            queue.extend(await self.react(message))
            if self.events > limit:
                break
        raise RehearsalStuck(f"group {self.group_id}: no settlement after {self.events} events")

    async def react(self, message: Outgoing) -> list[Outgoing]:
        """What a simulated member does with one message (questions and proposals only)."""
        if message.kind is Kind.QUESTION:
            return await self.answer(message)
        if message.kind is Kind.PROPOSAL:
            out: list[Outgoing] = []
            accept = _choice(message.choices, Action.ACCEPT)
            for member in self.members:
                out += await self.send(Press(self.key(), member, accept.token))
            return out
        return []

    async def answer(self, message: Outgoing) -> list[Outgoing]:
        facts = message.facts
        assert isinstance(facts, QuestionFacts)
        if message.ref in self.withdrawn:  # asked ahead of time, no longer needed
            return []
        tenant = self.tenants[str(message.to.chat_id)]
        room = tenant.choose(facts.prices, facts.choices, self.floor)
        token = next(c.token for c in message.choices if c.room == room)
        member = next(m for m in self.members if m.user_id == message.to.chat_id)
        out = await self.send(Press(self.key(), member, token))
        if not any(m.kind is Kind.REFUSAL for m in out):  # e.g. withdrawn while we pressed
            self.answers += 1
        return out


def _choice(choices: Sequence[Choice], action: Action) -> Choice:
    return next(c for c in choices if c.action is action)
