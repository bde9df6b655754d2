"""The call validator finds what the spec forbids and accepts what it allows.

Outside reference: Telegram Bot API spec, bot/sandbox/botapi/api.json (required fields,
field names and types, and the limits quoted in its descriptions).
"""

from __future__ import annotations

from typing import Any

from bot.sandbox.spec import BotApiSpec
from bot.sandbox.validator import validate_call, validate_result


def keyboard(callback_data: str) -> dict[str, Any]:
    return {"inline_keyboard": [[{"text": "Loft", "callback_data": callback_data}]]}


def test_a_well_formed_message_has_no_violations(spec: BotApiSpec) -> None:
    params = {"chat_id": -100, "text": "Who takes the loft?", "reply_markup": keyboard("room:1")}
    assert validate_call(spec, "sendMessage", params) == []


def test_missing_required_field_is_reported(spec: BotApiSpec) -> None:
    # Telegram Bot API spec: sendMessage.chat_id is required
    found = validate_call(spec, "sendMessage", {"text": "hello"})
    assert found == ["sendMessage.chat_id is required by the spec but was not sent"]


def test_unknown_field_is_reported(spec: BotApiSpec) -> None:
    found = validate_call(spec, "sendMessage", {"chat_id": 1, "text": "hi", "colour": "teal"})
    assert len(found) == 1
    assert found[0].startswith("sendMessage.colour is not a field of sendMessage")


def test_type_mismatch_is_reported(spec: BotApiSpec) -> None:
    # Telegram Bot API spec: getChatMember.user_id is Integer
    found = validate_call(spec, "getChatMember", {"chat_id": 1, "user_id": "seven"})
    assert found == ["getChatMember.user_id must be Integer, but a string was sent"]


def test_text_limit_counts_characters(spec: BotApiSpec) -> None:
    # Telegram Bot API spec: sendMessage.text "1-4096 characters after entities parsing"
    assert validate_call(spec, "sendMessage", {"chat_id": 1, "text": "é" * 4096}) == []
    too_long = validate_call(spec, "sendMessage", {"chat_id": 1, "text": "é" * 4097})
    assert len(too_long) == 1 and "4097 characters" in too_long[0]
    empty = validate_call(spec, "sendMessage", {"chat_id": 1, "text": ""})
    assert len(empty) == 1 and "0 characters" in empty[0]


def test_text_limit_applies_after_html_is_parsed(spec: BotApiSpec) -> None:
    # Telegram Bot API spec: the limit is "after entities parsing", so tags do not count
    html = "<b>" + "x" * 4096 + "</b>"
    assert (
        validate_call(spec, "sendMessage", {"chat_id": 1, "text": html, "parse_mode": "HTML"}) == []
    )
    as_plain_text = validate_call(spec, "sendMessage", {"chat_id": 1, "text": html})
    assert len(as_plain_text) == 1 and "4103 characters" in as_plain_text[0]
    overflowing = "<i>" + "x" * 4097 + "</i>"
    params = {"chat_id": 1, "text": overflowing, "parse_mode": "HTML"}
    assert len(validate_call(spec, "sendMessage", params)) == 1


def test_callback_data_limit_counts_bytes_not_characters(spec: BotApiSpec) -> None:
    # Telegram Bot API spec: InlineKeyboardButton.callback_data "1-64 bytes"
    fits = {"chat_id": 1, "text": "pick", "reply_markup": keyboard("é" * 32)}  # 64 bytes
    too_long = {"chat_id": 1, "text": "pick", "reply_markup": keyboard("é" * 33)}  # 66 bytes
    assert validate_call(spec, "sendMessage", fits) == []
    found = validate_call(spec, "sendMessage", too_long)
    assert len(found) == 1
    assert found[0].startswith(
        "sendMessage.reply_markup.inline_keyboard[0][0].callback_data is 66 bytes"
    )


def test_nested_keyboard_buttons_are_checked_for_required_and_unknown_fields(
    spec: BotApiSpec,
) -> None:
    # Telegram Bot API spec: InlineKeyboardButton.text is required; "colour" is no field
    markup = {"inline_keyboard": [[{"callback_data": "a", "colour": "red"}]]}
    found = validate_call(spec, "sendMessage", {"chat_id": 1, "text": "x", "reply_markup": markup})
    assert any("inline_keyboard[0][0].text is required" in v for v in found)
    assert any("inline_keyboard[0][0].colour is not a field" in v for v in found)


def test_reply_markup_must_be_an_object(spec: BotApiSpec) -> None:
    found = validate_call(spec, "sendMessage", {"chat_id": 1, "text": "x", "reply_markup": [1]})
    assert len(found) == 1 and "must be InlineKeyboardMarkup or ReplyKeyboardMarkup" in found[0]


def test_answer_callback_query_text_limit(spec: BotApiSpec) -> None:
    # Telegram Bot API spec: answerCallbackQuery.text "0-200 characters"
    ok = validate_call(spec, "answerCallbackQuery", {"callback_query_id": "1", "text": "y" * 200})
    bad = validate_call(spec, "answerCallbackQuery", {"callback_query_id": "1", "text": "y" * 201})
    assert ok == [] and len(bad) == 1


def test_bot_command_limits_and_command_count(spec: BotApiSpec) -> None:
    # Telegram Bot API spec: BotCommand.command 1-32 characters, description 1-256 characters,
    # setMyCommands "At most 100 commands can be specified"
    good = {"command": "c" * 32, "description": "d" * 256}
    assert validate_call(spec, "setMyCommands", {"commands": [good] * 100}) == []
    bad_command = validate_call(
        spec, "setMyCommands", {"commands": [{"command": "c" * 33, "description": "d"}]}
    )
    bad_description = validate_call(
        spec, "setMyCommands", {"commands": [{"command": "c", "description": "d" * 257}]}
    )
    too_many = validate_call(spec, "setMyCommands", {"commands": [good] * 101})
    assert len(bad_command) == 1 and "commands[0].command is 33 characters" in bad_command[0]
    assert len(bad_description) == 1 and "257 characters" in bad_description[0]
    assert len(too_many) == 1 and "commands is 101 items" in too_many[0]


def test_conditionally_required_fields(spec: BotApiSpec) -> None:
    # Telegram Bot API spec: editMessageText.chat_id "Required if inline_message_id is not
    # specified"; text "required if rich_message isn't specified"
    assert (
        validate_call(spec, "editMessageText", {"chat_id": 1, "message_id": 2, "text": "t"}) == []
    )
    found = validate_call(spec, "editMessageText", {"chat_id": 1, "message_id": 2})
    assert any(v.startswith("editMessageText.text is required unless") for v in found)


def test_unknown_method_is_reported(spec: BotApiSpec) -> None:
    assert validate_call(spec, "sendTelepathy", {})[0].startswith("sendTelepathy is not a Bot API")


def test_response_validation_can_fail(spec: BotApiSpec) -> None:
    # Telegram Bot API spec: Message requires message_id, date and chat
    message = {"message_id": 1, "date": 0, "chat": {"id": 1, "type": "private"}}
    assert validate_result(spec, "sendMessage", message) == []
    broken = {"message_id": 1, "date": 0}
    assert validate_result(spec, "sendMessage", broken) == [
        "sendMessage result.chat is required by the spec but was not sent"
    ]
