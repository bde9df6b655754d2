"""The written agreement and the history through the real bot and the Bot API stand-in.

Outside reference: the Telegram Bot API spec checks every call (fixture ``standin``); the
flat (12 Sorrel Lane) and its people are invented (harness.py).
"""

from __future__ import annotations

from pathlib import Path

from telegram import Bot

from bot.adapter.application import running
from bot.adapter.documents import CAPTION_LIMIT, send_agreement
from bot.rounds.messages import AgreementFacts, AgreementLine, Kind, Outgoing, Recipient
from bot.sandbox import BotApiStandIn
from tests.adapter.harness import ADDRESS, NAMES, ROOMS, Flat, app_for, euros


async def test_shared_costs_round_then_history(standin: BotApiStandIn, db_path: Path) -> None:
    flat = Flat.invent(standin, db_path, size=3, rent=1_500_00, seed=4)
    world = standin.world
    async with running(app_for(standin, db_path)):
        rooms = ", ".join(ROOMS[:3])
        world.user_says(
            flat.admin, flat.group, f"/newround 1800.00 EUR; {rooms}; tolerance 10; shared 300"
        )
        opened = await flat.wait_group("The round is open")
        assert f"Shared costs: {euros(300_00)} split evenly" in (opened.text or "")
        join = next(b for row in opened.buttons() for b in row if b.text == "Count me in")
        assert join.callback_data is not None
        for person in flat.people:
            await flat.press(person, opened, join.callback_data)
        await flat.wait_group("Every room has a member now")
        world.user_says(flat.admin, flat.group, "/begin")
        await flat.wait_group("Everyone is in")
        settled = await flat.play_until_settled()
        assert settled is not None
        text = settled.text or settled.caption or ""
        # 300.00 over three: 100.00 each, shown beside each room price (Babel's formatting).
        assert text.count(f"+ {euros(100_00)} shared") == 3
        assert f"which matches the rent of {euros(1_800_00)}" in text

        # the written agreement arrives through the outbox once the round is settled
        def both_documents() -> list | None:
            sent = [m for m in world.messages_in(flat.group) if m.document is not None]
            return sent if len(sent) >= 2 else None

        documents = await standin.wait_for(both_documents, timeout=10)
        names = [d.document.filename for d in documents]  # type: ignore[union-attr]
        assert [n.rsplit(".", 1)[1] for n in names] == ["md", "html"]
        markdown = documents[0].document.content.decode("utf-8")  # type: ignore[union-attr]
        for person in flat.people:
            assert person.first_name in markdown
        world.user_says(flat.admin, flat.group, "/agreements")
        listed = await flat.wait_group("Agreements of this group")
        for person in flat.people:
            assert f"{person.first_name}: " in (listed.text or "")


def one_line_agreement(group_id: int) -> AgreementFacts:
    line = AgreementLine(NAMES[0], 1, 0, ROOMS[0], 900_00, 0, 1_767_225_600, (900_00, 600_00))
    return AgreementFacts(
        3,
        group_id,
        1_767_225_600,
        1_500_00,
        "EUR",
        2,
        ROOMS[:2],
        (),
        (line,),
        (ROOMS[1],),
        (600_00,),
        0,
        0,
        100,
        0,
    )


async def test_agreement_is_sent_as_two_documents(standin: BotApiStandIn) -> None:
    group = standin.world.add_group(ADDRESS, [standin.world.add_user(NAMES[0])])
    message = Outgoing(Recipient.group(group.id), Kind.AGREEMENT, one_line_agreement(group.id))
    async with Bot(
        standin.token, base_url=standin.base_url, base_file_url=standin.base_file_url
    ) as bot:
        sent_id = await send_agreement(bot, message, "en")
    documents = [m for m in standin.world.messages_in(group) if m.document is not None]
    assert [d.document.filename.rsplit(".", 1)[1] for d in documents] == ["md", "html"]  # type: ignore[union-attr]
    assert documents[-1].message_id == sent_id
    html_text = documents[-1].document.content.decode("utf-8")  # type: ignore[union-attr]
    assert f"<td>{NAMES[0]}</td><td>{ROOMS[0]}</td><td>900.00 EUR</td>" in html_text
    assert f"{ROOMS[1]} stays empty" in html_text


async def test_the_outcome_is_the_first_file_caption_when_it_fits(
    standin: BotApiStandIn,
) -> None:
    # Telegram Bot API, sendDocument: caption 0-1024 characters (the stand-in checks every
    # call against the vendored spec); a longer outcome becomes a message of its own.
    group = standin.world.add_group(ADDRESS, [standin.world.add_user(NAMES[0])])
    message = Outgoing(Recipient.group(group.id), Kind.AGREEMENT, one_line_agreement(group.id))
    short = "Everyone agreed. The split: " + "x" * (CAPTION_LIMIT - 28)
    long = short + "y"
    async with Bot(
        standin.token, base_url=standin.base_url, base_file_url=standin.base_file_url
    ) as bot:
        await send_agreement(bot, message, "en", short)
        fits = [m for m in standin.world.messages_in(group) if m.from_bot]
        await send_agreement(bot, message, "en", long)
        apart = [m for m in standin.world.messages_in(group) if m.from_bot][len(fits) :]
    assert [m.document is not None for m in fits] == [True, True]
    assert fits[0].caption == short and "Keep it with your papers" in (fits[1].caption or "")
    assert [m.document is not None for m in apart] == [False, True, True]
    assert apart[0].text == long and apart[1].caption is None


async def test_the_retention_policy_runs_once_a_day(standin: BotApiStandIn, db_path: Path) -> None:
    app = app_for(standin, db_path)
    async with running(app):
        assert app.job_queue is not None
        (job,) = app.job_queue.get_jobs_by_name("flatpact-retention")
        assert job.job.trigger.interval.total_seconds() == 24 * 3600  # APScheduler's trigger
