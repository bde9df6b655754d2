"""Benchmark (not a test): time to handle one answer end to end on loopback.

Measures, for each answer of simulated rounds, the time from the button press (the stand-in
queues the callback update) until the bot has stored the answer and edited the answered
question (buttons gone); the next questions are sent in the same step. Real PTB Application,
real polling over HTTP on 127.0.0.1, real SQLite file.
Run: ``python -m bot.bench.adapter [--rounds 3] [--members 4]``.
"""

from __future__ import annotations

import argparse
import asyncio
import statistics
import tempfile
import time
from collections.abc import Sequence
from pathlib import Path

from bot.adapter.application import build_application, running
from bot.demo.standin_settings import settings_for
from bot.sandbox import BotApiStandIn, SimMessage, SimUser
from solver import Problem
from solver.simulate import Tenant, random_tenants

ROOMS = ("Skylight", "Corner", "Garden side", "Nook", "Long room", "Porch")
NAMES = ("Odile", "Farid", "Mirela", "Tane", "Yusuf", "Brígida")


async def one_round(members: int, seed: int, timings: list[float]) -> None:
    async with BotApiStandIn() as standin:
        world = standin.world
        people = [world.add_user(NAMES[i], language_code="en") for i in range(members)]
        group = world.add_group("12 Sorrel Lane", people)
        for person in people:
            world.user_opens_private_chat(person)
        rent = 1_000_00 * members
        problem = Problem(rent, ROOMS[:members], tuple(str(p.id) for p in people))
        tenants = random_tenants(problem, "quasi-linear", seed)
        with tempfile.TemporaryDirectory() as folder:
            settings = settings_for(
                standin, Path(folder) / "bench.sqlite3", group_messages_per_minute=100_000
            )
            async with running(build_application(settings)):
                rooms = ", ".join(ROOMS[:members])
                world.user_says(people[0], group, f"/newround {rent / 100:.2f} EUR; {rooms}")
                opened = await standin.wait_for(lambda: _with_button(world.messages_in(group)))
                join = opened.buttons()[0][0].callback_data or ""
                for person in people:
                    world.user_presses(person, opened, join)
                await standin.wait_for(
                    lambda: any("Every room" in (m.text or "") for m in world.messages_in(group))
                )
                world.user_says(people[0], group, "/begin")
                await _answer_all(standin, people, tenants, timings)


def _with_button(messages: Sequence[SimMessage]) -> SimMessage | None:
    return next((m for m in reversed(messages) if m.from_bot and m.buttons()), None)


async def _answer_all(
    standin: BotApiStandIn, people: list[SimUser], tenants: dict[str, Tenant], timings: list[float]
) -> None:
    world = standin.world
    done: set[tuple[int, int]] = set()

    def open_question() -> tuple[SimUser, SimMessage] | None:
        for person in people:
            for message in world.messages_in(world.private_chat_of(person)):
                if message.buttons() and (message.chat.id, message.message_id) not in done:
                    return person, message
        return None

    def proposal() -> bool:
        return any("Suggested split" in (m.text or "") for m in world.messages if m.from_bot)

    def next_step() -> tuple[SimUser, SimMessage] | str | None:
        return open_question() or ("proposal" if proposal() else None)

    while True:
        found = await standin.wait_for(next_step, timeout=20)
        if not isinstance(found, tuple):  # the proposal arrived: every question is answered
            return
        person, message = found
        done.add((message.chat.id, message.message_id))
        labels = {b.text: b.callback_data for row in message.buttons() for b in row}
        tenant = tenants[str(person.id)]
        prices = _prices(message)
        choices = [i for i, room in enumerate(ROOMS) if f"I'd take {room}" in labels]
        room = tenant.choose(prices, choices, 0)
        started = time.perf_counter()
        world.user_presses(person, message, labels[f"I'd take {ROOMS[room]}"] or "")

        def handled(m: SimMessage = message) -> bool:
            # the answer is stored and acknowledged once its message has lost its buttons
            # (several questions may be open at once, so no new message need follow)
            return not m.buttons()

        await standin.wait_for(handled)
        timings.append(time.perf_counter() - started)


def _prices(message: SimMessage) -> list[int]:
    """Prices from the question text ("• Room: €1,234.50"), in minor units."""
    prices = []
    for line in (message.text or "").splitlines():
        if line.startswith("• "):
            amount = line.rsplit("€", 1)[1].replace(",", "")
            whole, _, cents = amount.partition(".")
            prices.append(int(whole) * 100 + int(cents or 0))
    return prices


def main(argv: Sequence[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description="Time one answer end to end on loopback.")
    parser.add_argument("--rounds", type=int, default=3)
    parser.add_argument("--members", type=int, default=4, choices=range(2, 7))
    args = parser.parse_args(argv)
    timings: list[float] = []
    for seed in range(args.rounds):
        asyncio.run(one_round(args.members, seed, timings))
    ordered = sorted(timings)
    p99 = ordered[min(len(ordered) - 1, round(0.99 * (len(ordered) - 1)))]
    print(f"answers timed: {len(timings)} ({args.rounds} rounds of {args.members} members)")
    print(f"median: {statistics.median(timings) * 1000:.1f} ms")
    print(f"p99:    {p99 * 1000:.1f} ms")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
