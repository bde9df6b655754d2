"""Benchmark (not a test): time from a button press to its answer (answerCallbackQuery).

Telegram shows a spinning button until the bot answers the press and gives up after a few
seconds, so this is the latency people feel. Scenarios, each with the real PTB Application
polling the stand-in over HTTP on 127.0.0.1 and a real SQLite file:

* ``--groups 1``: one flat of four; all four press "Count me in" at the same moment, answer
  their questions as they come, then all four press "Agree" at the same moment;
* ``--groups 20``: twenty such flats at once, every flat doing the above side by side.

Group pacing is Telegram's (``--per-minute 20``, common practice), so group messages wait
their turn exactly as in production while the presses are answered. The report gives p50 and
p99 of press -> answer over every press, and the most calls any group got in one sliding
minute (sends and edits).
Run: ``python -m bot.bench.presses --groups 1`` and ``python -m bot.bench.presses --groups 20``.
"""

from __future__ import annotations

import argparse
import asyncio
import statistics
import tempfile
from collections.abc import Sequence
from pathlib import Path

from bot.adapter.application import build_application, running
from bot.adapter.group_pace import COUNTED_METHODS, GROUP_MESSAGES_PER_MINUTE
from bot.bench.adapter import NAMES, ROOMS, _prices
from bot.demo.standin_settings import settings_for
from bot.sandbox import BotApiStandIn, SimChat, SimMessage, SimUser
from bot.sandbox.world import World
from solver import Problem
from solver.simulate import Tenant, random_tenants

ROUND_TIMEOUT = 600.0


#: query id -> what was pressed ("join", "answer", "agree"), for the breakdown
KINDS: dict[str, str] = {}


async def one_flat(
    standin: BotApiStandIn, group: SimChat, people: list[SimUser], tenants: dict[str, Tenant]
) -> None:
    """Set up, everyone joins at once, questions as they come, everyone agrees at once."""
    world = standin.world
    rent = 1_000_00 * len(people)
    rooms = ", ".join(ROOMS[: len(people)])
    world.user_says(people[0], group, f"/newround {rent / 100:.2f} EUR; {rooms}")
    opened = await _wait_button(standin, group, "Count me in")
    await _all_press(standin, people, *opened, kind="join")
    await _wait_text(standin, group, "Every room has a member")
    world.user_says(people[0], group, "/begin")
    done: set[tuple[int, int]] = set()

    def next_step() -> tuple[SimUser | None, SimMessage, str] | None:
        question = _open_question(world, people, done)
        if question is not None:
            return question[0], question[1], ""
        agree = _button(world, group, "Agree")
        return None if agree is None else (None, *agree)

    while True:
        person, message, data = await standin.wait_for(next_step, timeout=ROUND_TIMEOUT)
        if person is None:  # the proposal: everyone agrees at once
            await _all_press(standin, people, message, data, kind="agree")
            await _wait_text(standin, group, "Everyone agreed")
            return
        done.add((message.chat.id, message.message_id))
        labels = {b.text: b.callback_data for row in message.buttons() for b in row}
        choices = [i for i, room in enumerate(ROOMS) if f"I'd take {room}" in labels]
        room = tenants[str(person.id)].choose(_prices(message), choices, 0)
        pressed = world.user_presses(person, message, labels[f"I'd take {ROOMS[room]}"] or "")
        KINDS[pressed.query_id] = "answer"


def _open_question(
    world: World, people: list[SimUser], done: set[tuple[int, int]]
) -> tuple[SimUser, SimMessage] | None:
    for person in people:
        for message in world.messages_in(world.private_chat_of(person)):
            if message.buttons() and (message.chat.id, message.message_id) not in done:
                return person, message
    return None


def _button(world: World, group: SimChat, label: str) -> tuple[SimMessage, str] | None:
    for message in reversed(world.messages_in(group)):
        for row in message.buttons():
            for button in row:
                if button.text == label and button.callback_data:
                    return message, button.callback_data
    return None


async def _wait_button(
    standin: BotApiStandIn, group: SimChat, label: str
) -> tuple[SimMessage, str]:
    return await standin.wait_for(lambda: _button(standin.world, group, label), ROUND_TIMEOUT)


async def _wait_text(standin: BotApiStandIn, group: SimChat, fragment: str) -> None:
    world = standin.world
    await standin.wait_for(
        lambda: any(fragment in (m.text or m.caption or "") for m in world.messages_in(group)),
        ROUND_TIMEOUT,
    )


async def _all_press(
    standin: BotApiStandIn, people: list[SimUser], message: SimMessage, data: str, *, kind: str
) -> None:
    """Every member presses the same button in the same instant; wait for all the answers."""
    presses = [standin.world.user_presses(person, message, data) for person in people]
    KINDS.update((p.query_id, kind) for p in presses)
    await standin.wait_for(lambda: all(p.answered for p in presses), ROUND_TIMEOUT)


def busiest_group_minute(standin: BotApiStandIn) -> int:
    """The most counted calls (sends, edits) one group got in any sliding 60 s."""
    by_group: dict[int, list[float]] = {}
    for call in standin.calls:
        chat = call.params.get("chat_id")
        if call.method.lower() in COUNTED_METHODS and isinstance(chat, int) and chat < 0:
            by_group.setdefault(chat, []).append(call.at)
    most = 0
    for stamps in by_group.values():
        stamps.sort()
        for i, start in enumerate(stamps):
            most = max(most, sum(1 for t in stamps[i:] if t < start + 60.0))
    return most


async def run(groups: int, members: int, per_minute: float, seed: int) -> tuple[list[float], int]:
    """Latencies (s) of every press, and the busiest group minute."""
    async with BotApiStandIn() as standin:
        world = standin.world
        flats = []
        for g in range(groups):
            people = [world.add_user(NAMES[i], language_code="en") for i in range(members)]
            group = world.add_group(f"Flat {g + 1}", people)
            for person in people:
                world.user_opens_private_chat(person)
            problem = Problem(1_000_00 * members, ROOMS[:members], tuple(str(p.id) for p in people))
            flats.append((group, people, random_tenants(problem, "quasi-linear", seed + g)))
        with tempfile.TemporaryDirectory() as folder:
            settings = settings_for(
                standin, Path(folder) / "bench.sqlite3", group_messages_per_minute=per_minute
            )
            async with running(build_application(settings)):
                await asyncio.gather(*(one_flat(standin, *flat) for flat in flats))
        latencies = [
            c.answered_at - c.pressed_at for c in world.callbacks.values() if c.answered_at
        ]
        for label in ("join", "answer", "agree"):
            kind = [
                c.answered_at - c.pressed_at
                for c in world.callbacks.values()
                if c.answered_at and KINDS.get(c.query_id) == label
            ]
            if kind:
                print(
                    f"  {label}: {len(kind)} presses, p50 {statistics.median(kind) * 1000:.0f} "
                    f"ms, p99 {percentile(kind, 0.99) * 1000:.0f} ms"
                )
        unanswered = sum(1 for c in world.callbacks.values() if not c.answered)
        if unanswered:
            raise SystemExit(f"{unanswered} presses were never answered")
        return latencies, busiest_group_minute(standin)


def percentile(values: Sequence[float], share: float) -> float:
    ordered = sorted(values)
    return ordered[min(len(ordered) - 1, round(share * (len(ordered) - 1)))]


def main(argv: Sequence[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description="Time press -> answerCallbackQuery on loopback.")
    parser.add_argument("--groups", type=int, default=1)
    parser.add_argument("--members", type=int, default=4, choices=range(2, 7))
    parser.add_argument("--per-minute", type=float, default=GROUP_MESSAGES_PER_MINUTE)
    parser.add_argument("--seed", type=int, default=0)
    args = parser.parse_args(argv)
    latencies, busiest = asyncio.run(run(args.groups, args.members, args.per_minute, args.seed))
    print(
        f"{args.groups} group(s) of {args.members}, group pacing {args.per_minute:g}/min: "
        f"{len(latencies)} presses answered"
    )
    print(f"press -> answer p50: {statistics.median(latencies) * 1000:.1f} ms")
    print(f"press -> answer p99: {percentile(latencies, 0.99) * 1000:.1f} ms")
    print(f"press -> answer max: {max(latencies) * 1000:.1f} ms")
    print(f"busiest group, any sliding minute: {busiest} sends and edits")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
