"""One whole round of the real bot in the local sandbox, acted out by invented flatmates.

This is the demo's core, kept apart from argument parsing so tests can run it in-process.
Nothing is faked on the bot's side: the real
:func:`bot.adapter.application.build_application` polls the
real stand-in (:class:`bot.sandbox.BotApiStandIn`) over loopback HTTP, with the default
embedded SQLite store in the output folder. The flatmates only read chats and press buttons.
"""

from __future__ import annotations

import asyncio
import contextlib
import time
from collections.abc import AsyncIterator, Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import TextIO

from rich.console import Console
from rich.progress import Progress, SpinnerColumn, TextColumn, TimeElapsedColumn

from bot.adapter.application import build_application, running
from bot.adapter.runtime import RUNTIME_KEY, AnyApp, Runtime
from bot.demo.chat_log import ChatLog
from bot.demo.flat import (
    ADDRESS,
    CURRENCY,
    DECIMALS,
    FLATMATES,
    SimulatedMind,
    invent_tenants,
    rent_for,
    rooms_for,
    rough_text,
)
from bot.demo.flatmates import Flatmate, Household, Mind
from bot.demo.standin_settings import settings_for
from bot.demo.terminal_player import TerminalPlayer
from bot.rounds.messages import StatusFacts
from bot.rounds.phases import Phase
from bot.rounds.search_steps import stored_search
from bot.rounds.searches import AnySearch
from bot.sandbox import BotApiStandIn, SimChat, SimMessage
from solver.money import format_minor
from solver.simulate import Model, Tenant

FINAL_PHASES = frozenset({"settled", "cancelled", "lapsed"})
DATABASE_NAME = "demo.sqlite3"
PICTURE_NAME = "walk.png"
#: The written agreement comes as Markdown and HTML.
AGREEMENT_FILES = 2
#: How the live status message reads once the round is settled, and how long to wait for it
#: (its rewrites are a few seconds apart: bot.adapter.board_edits).
DONE = "Done: "
STATUS_PATIENCE = 10.0
_Check = Callable[[StatusFacts], bool]


@dataclass(frozen=True, slots=True)
class DemoOptions:
    """What ``python -m bot.demo`` was asked for; money in minor units."""

    rooms: int = 4
    seed: int = 7
    model: Model = "quasi-linear"
    tolerance: int = 100
    out: Path = Path("out")
    play: str | None = None
    #: seconds anyone waits for the next thing to happen before giving up
    patience: float = 60.0
    #: the flatmates give rough values per room (their hidden values give or take 10%)
    rough: bool = False


@dataclass(frozen=True, slots=True)
class DemoResult:
    """What the round ended with, as stored by the bot, plus each flatmate's hidden values."""

    names: tuple[str, ...]
    rooms: tuple[str, ...]
    rent: int
    tolerance: int
    phase: str
    tenants: dict[str, Tenant]
    assignment: dict[str, int]
    prices: tuple[int, ...]
    asked: dict[str, int]
    answered_by_hand: str | None
    picture: Path | None
    #: the written agreement as the group received it (Markdown and HTML), saved under --out
    documents: tuple[Path, ...]
    database: Path
    seconds: float
    api_calls: int
    group_id: int
    #: (chat id, caption) of every sendPhoto the stand-in accepted
    sent_photos: tuple[tuple[int, str | None], ...] = field(default=())
    #: the bot's new messages in the group, in order, by their first line (edits not counted)
    group_posts: tuple[str, ...] = field(default=())
    violations: tuple[str, ...] = field(default=())

    def envy(self, name: str) -> float:
        """How much more (minor units) ``name`` would pay to swap, by their own values."""
        return self.tenants[name].envy(self.prices, self.assignment[name])


def fresh_database(out: Path) -> Path:
    """``out/demo.sqlite3`` without any earlier run's rows."""
    out.mkdir(parents=True, exist_ok=True)
    database = out / DATABASE_NAME
    for leftover in (database, out / f"{DATABASE_NAME}-wal", out / f"{DATABASE_NAME}-shm"):
        leftover.unlink(missing_ok=True)
    return database


def _runtime(app: AnyApp) -> Runtime:
    found = app.bot_data.get(RUNTIME_KEY)
    if not isinstance(found, Runtime):
        raise RuntimeError("the bot did not start (post_init did not run)")
    return found


@contextlib.asynccontextmanager
async def _progress(console: Console, live: bool) -> AsyncIterator[Progress | None]:
    """A live progress line at the bottom of a terminal; nothing when output is piped."""
    if not live:
        yield None
        return
    columns = (SpinnerColumn(), TextColumn("{task.description}"), TimeElapsedColumn())
    with Progress(*columns, console=console, transient=True) as progress:
        yield progress


@dataclass
class _Round:
    """The running parts of one demo round."""

    options: DemoOptions
    console: Console
    standin: BotApiStandIn
    group: SimChat
    household: Household
    runtime: Runtime
    chat_log: ChatLog

    @property
    def admin(self) -> Flatmate:
        return self.household.flatmates[0]

    async def status(self) -> StatusFacts | None:
        return await self.runtime.engine.status(group_id=self.group.id)

    async def set_up(self) -> None:
        """The admin sets the round up; everyone joins and opens the private chat; /begin."""
        rooms = self.household.rooms
        rent = format_minor(rent_for(rooms_for(len(rooms))), DECIMALS)
        tolerance = format_minor(self.options.tolerance, DECIMALS)
        world = self.standin.world
        world.user_says(
            self.admin.user,
            self.group,
            f"/newround {rent} {CURRENCY}; {', '.join(rooms)}; tolerance {tolerance}",
        )
        opened = await self.household.wait_for_join_button()
        for mate in self.household.flatmates:
            await self.household.join(mate, opened)
        await self._until(lambda s: len(s.round.members) == len(rooms), "everyone has joined")
        if self.options.rough:
            for mate in self.household.flatmates:
                await self.household.give_rough_values(mate)
        world.user_says(self.admin.user, self.group, "/begin")

    async def _until(self, done: _Check, what: str) -> StatusFacts:
        """Wait (on world changes) until the stored round satisfies ``done``."""
        deadline = time.monotonic() + self.options.patience
        while time.monotonic() < deadline:
            status = await self.status()
            if status is not None and done(status):
                return status
            await self.standin.world.changed.wait(0.25)
        raise TimeoutError(f"the round did not reach '{what}' in {self.options.patience:.0f} s")

    async def watch(self, progress: Progress | None) -> StatusFacts:
        """Follow the stored round until it ends; then the flatmates stop."""
        task = progress.add_task("starting", total=None) if progress else None
        while True:
            status = await self.status()
            if status is not None and progress is not None and task is not None:
                waiting = ", ".join(name for _, name in status.waiting_for) or "nobody"
                progress.update(
                    task,
                    description=f"{Phase(status.round.phase).in_words}: "
                    f"{status.answered} answers so far, waiting for {waiting}",
                )
            if status is not None and status.round.phase in FINAL_PHASES:
                self.household.stop()
                return status
            await self.standin.world.changed.wait(0.25)

    async def photo(self) -> SimMessage | None:
        """The picture the bot sent to the group, if any arrives shortly after the end."""

        def sent() -> SimMessage | None:
            photos = [m for m in self.standin.world.messages_in(self.group) if m.photo]
            return photos[-1] if photos else None

        with contextlib.suppress(TimeoutError):
            return await self.standin.wait_for(sent, timeout=5)
        return None

    async def final_status(self, phase: str) -> None:
        """Give a settled round's live status message its last rewrite (rewrites come a few
        seconds apart)."""
        if phase != "settled":
            return

        def rewritten() -> bool | None:
            group = self.standin.world.messages_in(self.group)
            return any(m.from_bot and (m.text or "").startswith(DONE) for m in group) or None

        with contextlib.suppress(TimeoutError):
            await self.standin.wait_for(rewritten, timeout=STATUS_PATIENCE)

    async def documents(self, phase: str) -> list[SimMessage]:
        """The written agreement's files (Markdown and HTML) once everyone agreed."""

        def both() -> list[SimMessage] | None:
            found = [m for m in self.standin.world.messages_in(self.group) if m.document]
            return found if len(found) >= AGREEMENT_FILES else None

        if phase != "settled":
            return []
        with contextlib.suppress(TimeoutError):
            return await self.standin.wait_for(both, timeout=10)
        return [m for m in self.standin.world.messages_in(self.group) if m.document]


def _minds(
    options: DemoOptions, console: Console, names: tuple[str, ...], source: TextIO | None
) -> tuple[dict[str, Tenant], dict[str, Mind]]:
    rooms = rooms_for(options.rooms)
    tenants = dict(zip(names, invent_tenants(rooms, options.model, options.seed), strict=True))
    minds: dict[str, Mind] = {
        name: SimulatedMind(
            tenants[name],
            rough=rough_text(tenants[name], options.seed * 100 + i) if options.rough else None,
        )
        for i, name in enumerate(names)
    }
    if options.play is not None:
        player = TerminalPlayer(console, tuple(r.name for r in rooms), CURRENCY, DECIMALS)
        if source is not None:
            player.source = source
        minds[options.play] = player
    return tenants, minds


async def run_round(
    options: DemoOptions, console: Console, source: TextIO | None = None
) -> DemoResult:
    """Start the stand-in and the real bot, act the round out, and read back the result."""
    started = time.monotonic()
    names = FLATMATES[: options.rooms]
    if options.play is not None and options.play not in names:
        raise ValueError(f"--play takes one of {', '.join(names)}")
    room_names = tuple(room.name for room in rooms_for(options.rooms))
    database = fresh_database(options.out)
    tenants, minds = _minds(options, console, names, source)
    async with BotApiStandIn() as standin:
        world = standin.world
        people = [world.add_user(name, language_code="en") for name in names]
        group = world.add_group(ADDRESS, people)
        flatmates = [Flatmate(person, minds[person.first_name]) for person in people]
        chat_log = ChatLog(console, world, {p.id: p.first_name for p in people})
        household = Household(
            standin,
            group,
            flatmates,
            room_names,
            DECIMALS,
            patience=3600.0 if options.play else options.patience,
            on_press=chat_log.pressed,
        )
        player = minds.get(options.play or "")
        if isinstance(player, TerminalPlayer):
            player.before_prompt = chat_log.catch_up
        app = build_application(settings_for(standin, database))
        stop_printing = asyncio.Event()
        async with running(app):
            demo = _Round(options, console, standin, group, household, _runtime(app), chat_log)
            follower = asyncio.create_task(chat_log.follow(stop_printing))
            live = console.is_terminal and options.play is None
            try:
                async with _progress(console, live) as progress:
                    await demo.set_up()
                    async with asyncio.TaskGroup() as tasks:
                        tasks.create_task(household.live_until_stopped())
                        watcher = tasks.create_task(demo.watch(progress))
            except BaseException:
                stop_printing.set()
                await _let_bot_finish(standin)
                raise
            final = watcher.result()
            photo = await demo.photo()
            documents = await demo.documents(final.round.phase)
            walk = await _stored_walk(demo.runtime, group.id)
            shown = await _questions_shown(demo.runtime, group.id)
            await demo.final_status(final.round.phase)
            group_posts = chat_log.group_posts(group)
            stop_printing.set()
            await follower
        picture = _save_picture(photo, options.out)
        saved = _save_documents(documents, options.out)
        by_id = {str(p.id): p.first_name for p in people}
        proposal = walk.proposal() if walk is not None else None
        return DemoResult(
            names=names,
            rooms=room_names,
            rent=rent_for(rooms_for(options.rooms)),
            tolerance=options.tolerance,
            phase=final.round.phase,
            tenants=tenants,
            assignment={by_id[m]: r for m, r in proposal.assignment.items()} if proposal else {},
            prices=proposal.prices if proposal else (),
            asked={by_id[str(m)]: n for m, n in shown.items()},
            answered_by_hand=options.play,
            picture=picture,
            documents=saved,
            database=database,
            seconds=time.monotonic() - started,
            api_calls=len(standin.calls),
            group_id=group.id,
            sent_photos=tuple(
                (c["chat_id"], c.get("caption")) for c in standin.calls_to("sendPhoto")
            ),
            violations=tuple(standin.violations + standin.response_violations),
            group_posts=group_posts,
        )


async def _let_bot_finish(standin: BotApiStandIn, grace: float = 1.0) -> None:
    """Before stopping early, let the bot fetch and finish what it was handling, so its
    database is not closed under a running update."""
    with contextlib.suppress(TimeoutError):
        await standin.wait_for(lambda: not standin.world.updates.pending, timeout=grace)
    await asyncio.sleep(grace)


async def _stored_walk(runtime: Runtime, group_id: int) -> AnySearch | None:
    """The search of the group's latest round, as the bot stored it."""
    async with runtime.store.transaction() as tx:
        record = await tx.latest_round(group_id)
        return None if record is None else await stored_search(tx, record)


async def _questions_shown(runtime: Runtime, group_id: int) -> dict[int, int]:
    """Questions each member was sent, including ones asked ahead and later withdrawn."""
    async with runtime.store.transaction() as tx:
        record = await tx.latest_round(group_id)
        questions = await tx.questions(record.id) if record is not None else []
    shown: dict[int, int] = {}
    for question in questions:
        shown[question.user_id] = shown.get(question.user_id, 0) + 1
    return shown


def _save_documents(messages: list[SimMessage], out: Path) -> tuple[Path, ...]:
    """Write each file the group received, under its own name."""
    saved = []
    for message in messages:
        if message.document is not None:
            path = out / Path(message.document.filename).name
            path.write_bytes(message.document.content)
            saved.append(path)
    return tuple(saved)


def _save_picture(photo: SimMessage | None, out: Path) -> Path | None:
    """Write the exact bytes the group received."""
    if photo is None or photo.photo is None:
        return None
    path = out / PICTURE_NAME
    path.write_bytes(photo.photo.content)
    return path
