"""A simulated flatmate who answers inconsistently, and a driver that lets them object.

Invented behaviour for the tests (not data): the flatmate takes one room at their first
question and another room ever after, and objects to every split asking for a room they were
not given. The driver plays the whole group through the real engine; the others accept
whatever they are offered and, when objections are used up, the admin ends the round.
"""

from __future__ import annotations

from collections import Counter, deque
from collections.abc import Sequence
from dataclasses import dataclass, field

from bot.rounds.events import Actor, Press
from bot.rounds.messages import Action, DivisionFacts, Kind, Outgoing, PromptFacts
from bot.rounds.simulated_rounds import Rehearsal


class FirstThenOther:
    """Takes room ``first`` once, then room ``later`` whenever it is offered."""

    def __init__(self, first: int = 0, later: int = 1) -> None:
        self.first, self.later, self.asked = first, later, 0

    def choose(self, prices: Sequence[int], choices: Sequence[int], floor: int) -> int:
        self.asked += 1
        want = self.first if self.asked == 1 else self.later
        return want if want in choices else choices[0]

    def envy(self, prices: Sequence[int], room: int) -> float:
        return 0.0


@dataclass
class Outcome:
    end: Kind | None
    group_messages: int
    splits_posted: list[tuple[tuple[int, int, int], ...]] = field(default_factory=list)
    kinds: Counter[Kind] = field(default_factory=Counter)
    log: list[Outgoing] = field(default_factory=list)


async def play_with_objector(
    play: Rehearsal,
    outbox: list[Outgoing],
    objector: Actor,
    *,
    settle_disagreement: bool,
    limit: int = 600,
    stop_at: Kind | None = None,
) -> Outcome:
    """Run the round; the objector objects whenever they can.

    With ``settle_disagreement`` the objector, shown two answers that disagree, changes the
    earlier one to the room they now ask for (or keeps it when it cannot be changed);
    otherwise they ignore that message.
    """
    queue = deque(outbox)
    outcome = Outcome(None, 0)
    while queue and play.events < limit:
        message = queue.popleft()
        outcome.kinds[message.kind] += 1
        outcome.log.append(message)
        if not message.to.private:
            outcome.group_messages += 1
        if message.kind in (Kind.SETTLED, Kind.CANCELLED) or message.kind is stop_at:
            outcome.end = message.kind
            outcome.log.extend(queue)  # what came with it, unread
            break
        if message.kind is Kind.QUESTION:
            queue.extend(await play.answer(message))
        elif message.kind is Kind.PROPOSAL and isinstance(message.facts, DivisionFacts):
            outcome.splits_posted.append(
                tuple((line.user_id, line.room_index, line.price) for line in message.facts.lines)
            )
            queue.extend(await _vote(play, message, objector))
        elif message.kind in (Kind.SAME_SPLIT, Kind.LAST_CHOICE):
            queue.extend(await _vote(play, message, objector))
        elif message.kind is Kind.ANSWERS_DISAGREE and settle_disagreement:
            buttons = {c.action: c for c in message.choices}
            pick = buttons.get(Action.CHANGE_TO) or buttons[Action.KEEP_ANSWER]
            queue.extend(await play.send(Press(play.key(), objector, pick.token)))
    return outcome


async def _vote(play: Rehearsal, message: Outgoing, objector: Actor) -> list[Outgoing]:
    buttons = {c.action: c for c in message.choices}
    if Action.OBJECT in buttons:
        out = await play.send(Press(play.key(), objector, buttons[Action.OBJECT].token))
        prompt = out[0]
        if prompt.kind is not Kind.ROOM_PROMPT or not isinstance(prompt.facts, PromptFacts):
            return out
        own = prompt.facts.your_room
        rather = next(c for c in prompt.choices if c.room == (0 if own != 0 else 2))
        return await play.send(Press(play.key(), objector, rather.token))
    # Only an admin ends the round: the objector's press is refused and changes nothing.
    refused = await play.send(Press(play.key(), objector, buttons[Action.END_ROUND].token))
    assert [m.kind for m in refused] == [Kind.REFUSAL]
    votes: list[Outgoing] = []
    for member in play.members:
        if member != objector:
            votes += await play.send(Press(play.key(), member, buttons[Action.ACCEPT].token))
    return votes + await play.send(Press(play.key(), play.admin, buttons[Action.END_ROUND].token))
