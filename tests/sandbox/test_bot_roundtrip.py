"""A real telegram.Bot calls every implemented method over HTTP on 127.0.0.1.

Outside reference: Telegram Bot API spec, bot/sandbox/botapi/api.json. Every response is
validated against the spec's return types (standin.response_violations); error wordings follow
Telegram's documented/observed texts, which PTB maps to its exception classes.
The flat and its people are invented.
"""

from __future__ import annotations

import struct
import zlib
from datetime import timedelta

import pytest
from telegram import Bot, BotCommand, InlineKeyboardButton, InlineKeyboardMarkup
from telegram.error import (
    BadRequest,
    ChatMigrated,
    Conflict,
    EndPointNotFound,
    Forbidden,
    RetryAfter,
)

from bot.sandbox import BotApiStandIn, SandboxError, SimChat, SimUser


def pick_room_keyboard() -> InlineKeyboardMarkup:
    return InlineKeyboardMarkup(
        [
            [InlineKeyboardButton("Loft", callback_data="room:loft")],
            [InlineKeyboardButton("Box room", callback_data="room:box")],
        ]
    )


def tiny_png(width: int, height: int) -> bytes:
    def chunk(kind: bytes, data: bytes) -> bytes:
        body = kind + data
        return struct.pack(">I", len(data)) + body + struct.pack(">I", zlib.crc32(body))

    header = struct.pack(">IIBBBBB", width, height, 8, 0, 0, 0, 0)
    pixels = zlib.compress(b"".join(b"\x00" + b"\x00" * width for _ in range(height)))
    return (
        b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", header) + chunk(b"IDAT", pixels) + chunk(b"IEND", b"")
    )


@pytest.fixture
def flat(standin: BotApiStandIn) -> tuple[SimChat, SimUser, SimUser, SimUser]:
    """An invented flat: Odile owns the group, Bartek is an admin, Wen a member."""
    odile = standin.world.add_user("Odile", "odile_q")
    bartek = standin.world.add_user("Bartek", "bartek_q")
    wen = standin.world.add_user("Wen")
    group = standin.world.add_group("7 Quince Row", [odile, bartek, wen], admins=(bartek,))
    return group, odile, bartek, wen


async def test_get_me_returns_the_bot_user(standin: BotApiStandIn, bot: Bot) -> None:
    me = await bot.get_me()
    assert me.is_bot and me.username == "flatpact_sandbox_bot"
    assert me.id == int(standin.token.split(":")[0])
    assert me.can_read_all_group_messages is False  # privacy mode is on, as Telegram's default
    assert standin.response_violations == []


async def test_send_edit_and_delete_messages(standin: BotApiStandIn, bot: Bot, flat) -> None:
    group, *_ = flat
    first = await bot.send_message(
        group.id, "Who takes which room?", reply_markup=pick_room_keyboard()
    )
    second = await bot.send_message(group.id, "Reply by Friday.")
    assert (first.message_id, second.message_id) == (1, 2)  # ids count up per chat
    stored = standin.world.find_message(group, first.message_id)
    assert stored is not None and stored.text == "Who takes which room?"
    assert [b.callback_data for row in standin.world.buttons_of(stored) for b in row] == [
        "room:loft",
        "room:box",
    ]

    edited = await bot.edit_message_text(
        "Who takes which room? (2 left)",
        group.id,
        first.message_id,
        reply_markup=pick_room_keyboard(),
    )
    assert edited.edit_date is not None and stored.text == "Who takes which room? (2 left)"
    with pytest.raises(BadRequest, match="Message is not modified"):
        await bot.edit_message_text(
            "Who takes which room? (2 left)",
            group.id,
            first.message_id,
            reply_markup=pick_room_keyboard(),
        )
    await bot.edit_message_reply_markup(group.id, first.message_id, reply_markup=None)
    assert standin.world.buttons_of(stored) == []
    with pytest.raises(BadRequest, match="Message is not modified"):
        await bot.edit_message_reply_markup(group.id, first.message_id, reply_markup=None)

    assert await bot.delete_message(group.id, second.message_id)
    assert standin.world.last_message_to(group) is stored
    with pytest.raises(BadRequest, match="Message to delete not found"):
        await bot.delete_message(group.id, second.message_id)
    assert standin.violations == [] and standin.response_violations == []


async def test_html_text_is_shown_without_markup(standin: BotApiStandIn, bot: Bot, flat) -> None:
    group, *_ = flat
    await bot.send_message(group.id, "<b>Loft</b> &amp; attic", parse_mode="HTML")
    last = standin.world.last_message_to(group)
    assert last is not None and last.text == "Loft & attic"


async def test_button_press_reaches_the_bot_and_is_answered_once(
    standin: BotApiStandIn, bot: Bot, flat
) -> None:
    group, odile, *_ = flat
    sent = await bot.send_message(group.id, "Pick a room", reply_markup=pick_room_keyboard())
    message = standin.world.find_message(group, sent.message_id)
    assert message is not None
    press = standin.world.user_presses(odile, message, "room:box")
    updates = await bot.get_updates(timeout=1)
    assert len(updates) == 1
    query = updates[0].callback_query
    assert query is not None and query.data == "room:box" and query.from_user.id == odile.id
    assert query.id == press.query_id
    assert await bot.answer_callback_query(query.id, text="Box room noted")
    assert press.answered and press.answer_text == "Box room noted"
    with pytest.raises(BadRequest, match="Query is too old"):
        await bot.answer_callback_query(query.id)
    second = standin.world.user_presses(odile, message, "room:loft")
    assert second.query_id != press.query_id  # every press gets a fresh id


async def test_pressing_a_button_that_is_not_there_is_refused_unless_forged(
    standin: BotApiStandIn, bot: Bot, flat
) -> None:
    group, odile, *_ = flat
    sent = await bot.send_message(group.id, "Pick a room", reply_markup=pick_room_keyboard())
    message = standin.world.find_message(group, sent.message_id)
    assert message is not None
    with pytest.raises(SandboxError, match="no button with callback_data 'room:cellar'"):
        standin.world.user_presses(odile, message, "room:cellar")
    standin.world.user_presses(odile, message, "room:cellar", forge=True)
    updates = await bot.get_updates()
    assert [u.callback_query.data for u in updates if u.callback_query] == ["room:cellar"]


async def test_get_updates_honours_offset_limit_and_allowed_updates(
    standin: BotApiStandIn, bot: Bot, flat
) -> None:
    group, odile, bartek, _ = flat
    for text in ("/join", "/join", "/status"):
        standin.world.user_says(odile, group, text)
    standin.world.user_says(bartek, group, "just chatting")  # privacy mode: not delivered
    first_two = await bot.get_updates(limit=2)
    assert [u.message.text for u in first_two if u.message] == ["/join", "/join"]
    again = await bot.get_updates()  # not confirmed yet: the same updates come back
    assert [u.update_id for u in again[:2]] == [u.update_id for u in first_two]
    rest = await bot.get_updates(offset=first_two[-1].update_id + 1)
    assert [u.message.text for u in rest if u.message] == ["/status"]
    assert await bot.get_updates(offset=rest[-1].update_id + 1, timeout=0) == ()

    sent = await bot.send_message(group.id, "Pick", reply_markup=pick_room_keyboard())
    message = standin.world.find_message(group, sent.message_id)
    assert message is not None
    standin.world.user_presses(odile, message, "room:loft")
    standin.world.user_says(odile, group, "/status")
    only_presses = await bot.get_updates(allowed_updates=["callback_query"])
    assert [u.callback_query is not None for u in only_presses] == [True]


async def test_long_poll_waits_for_a_new_update(standin: BotApiStandIn, bot: Bot, flat) -> None:
    import asyncio

    group, odile, *_ = flat
    polling = asyncio.create_task(bot.get_updates(timeout=5))
    await asyncio.sleep(0.2)
    assert not polling.done()
    standin.world.user_says(odile, group, "/hello")
    updates = await asyncio.wait_for(polling, 2)
    assert updates[0].message is not None and updates[0].message.text == "/hello"


async def test_private_chat_needs_the_user_to_open_it_first(
    standin: BotApiStandIn, bot: Bot, flat
) -> None:
    _, _, _, wen = flat
    # Telegram's wording, surfaced by PTB as Forbidden (HTTP 403)
    with pytest.raises(Forbidden, match="bot can't initiate conversation with a user"):
        await bot.send_message(wen.id, "Your turn to choose")
    opened = standin.world.user_opens_private_chat(wen, payload="join-7qr")
    assert opened.text == "/start join-7qr"
    assert opened.entities == [{"type": "bot_command", "offset": 0, "length": 6}]
    sent = await bot.send_message(wen.id, "Your turn to choose")
    assert sent.chat.type == "private" and sent.chat.id == wen.id
    standin.world.user_blocks_bot(wen)
    with pytest.raises(Forbidden, match="bot was blocked by the user"):
        await bot.send_message(wen.id, "Still there?")


async def test_documents_and_photos_are_stored_and_downloadable(
    standin: BotApiStandIn, bot: Bot, flat
) -> None:
    group, *_ = flat
    sheet = b"room,share\nLoft,812.40\nBox room,603.10\n"
    sent = await bot.send_document(group.id, sheet, filename="split.csv", caption="The split")
    assert sent.document is not None and sent.document.file_name == "split.csv"
    assert sent.caption == "The split"
    assert standin.world.files[sent.document.file_id].content == sheet
    downloaded = await (await bot.get_file(sent.document.file_id)).download_as_bytearray()
    assert bytes(downloaded) == sheet

    photo = await bot.send_photo(group.id, tiny_png(3, 2), caption="Floor plan")
    assert (photo.photo[-1].width, photo.photo[-1].height) == (3, 2)
    resent = await bot.send_photo(group.id, photo.photo[-1].file_id)
    assert resent.photo[-1].file_id == photo.photo[-1].file_id
    with pytest.raises(BadRequest, match="Wrong file identifier"):
        await bot.send_document(group.id, "no-such-file")
    assert standin.response_violations == []


async def test_commands_are_stored_per_scope(standin: BotApiStandIn, bot: Bot) -> None:
    commands = [BotCommand("newround", "Start a room round"), BotCommand("status", "Where are we")]
    assert await bot.set_my_commands(commands)
    assert [c.command for c in await bot.get_my_commands()] == ["newround", "status"]
    assert await bot.get_my_commands(language_code="de") == ()
    assert await bot.delete_my_commands()
    assert await bot.get_my_commands() == ()


async def test_chat_lookups(standin: BotApiStandIn, bot: Bot, flat) -> None:
    group, odile, bartek, wen = flat
    chat = await bot.get_chat(group.id)
    assert chat.title == "7 Quince Row" and chat.type == "group"
    statuses = [(await bot.get_chat_member(group.id, u.id)).status for u in (odile, bartek, wen)]
    assert statuses == ["creator", "administrator", "member"]
    outsider = standin.world.add_user("Ruairi")
    assert (await bot.get_chat_member(group.id, outsider.id)).status == "left"
    admins = await bot.get_chat_administrators(group.id)
    assert [a.user.id for a in admins] == [odile.id, bartek.id]
    standin.world.private_chat_of(wen)
    with pytest.raises(BadRequest, match="There are no administrators in the private chat"):
        await bot.get_chat_administrators(wen.id)
    with pytest.raises(BadRequest, match="Chat not found"):
        await bot.get_chat(-999)
    assert standin.response_violations == []


async def test_webhook_settings_are_stored_and_block_polling(
    standin: BotApiStandIn, bot: Bot
) -> None:
    assert (await bot.get_webhook_info()).url == ""
    assert await bot.set_webhook("https://flatpact.invalid/hook", secret_token="s3cret")
    info = await bot.get_webhook_info()
    assert info.url == "https://flatpact.invalid/hook" and info.pending_update_count == 0
    with pytest.raises(Conflict, match="webhook is active"):
        await bot.get_updates()
    assert await bot.delete_webhook()
    assert await bot.get_updates() == ()


@pytest.mark.filterwarnings("ignore::telegram.warnings.PTBDeprecationWarning")
async def test_flood_control_surfaces_as_retry_after(
    standin: BotApiStandIn, bot: Bot, flat
) -> None:
    group, *_ = flat
    standin.fail_next("sendMessage", times=2, retry_after=3)
    for _ in range(2):
        with pytest.raises(RetryAfter) as raised:
            await bot.send_message(group.id, "Reminder")
        # PTB warns that retry_after becomes a timedelta in a future version (filtered above)
        assert raised.value.retry_after in (3, timedelta(seconds=3))
    assert (await bot.send_message(group.id, "Reminder")).text == "Reminder"


async def test_group_migration_surfaces_as_chat_migrated(
    standin: BotApiStandIn, bot: Bot, flat
) -> None:
    group, *_ = flat
    supergroup = standin.world.upgrade_to_supergroup(group)
    with pytest.raises(ChatMigrated) as raised:
        await bot.send_message(group.id, "Hello again")
    assert raised.value.new_chat_id == supergroup.id
    sent = await bot.send_message(supergroup.id, "Hello again")
    assert sent.chat.type == "supergroup"
    service = await bot.get_updates()
    assert [u.message.migrate_to_chat_id for u in service if u.message][:1] == [supergroup.id]


@pytest.mark.filterwarnings("ignore::telegram.warnings.PTBUserWarning")
async def test_invalid_calls_are_refused_and_recorded(
    standin: BotApiStandIn, bot: Bot, flat
) -> None:
    # Telegram Bot API spec, bot/sandbox/botapi/api.json: sendMessage.chat_id required,
    # text "1-4096 characters", InlineKeyboardButton.callback_data "1-64 bytes"
    group, *_ = flat
    with pytest.raises(BadRequest, match="chat_id is required"):
        await bot.do_api_request("sendMessage", api_kwargs={"text": "no chat"})
    with pytest.raises(BadRequest, match="colour is not a field"):
        await bot.send_message(group.id, "hi", api_kwargs={"colour": "teal"})
    with pytest.raises(BadRequest, match="4097 characters"):
        await bot.send_message(group.id, "x" * 4097)
    long_data = InlineKeyboardMarkup([[InlineKeyboardButton("Loft", callback_data="r" * 65)]])
    with pytest.raises(BadRequest, match="65 bytes"):
        await bot.send_message(group.id, "pick", reply_markup=long_data)
    with pytest.raises(EndPointNotFound):
        await bot.do_api_request("sendTelepathy", api_kwargs={"chat_id": group.id})
    assert len(standin.violations) == 5
    assert standin.world.messages_in(group) == []  # nothing invalid was posted
