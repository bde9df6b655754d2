"""The spec loader and the limits parsed from the spec's prose.

Outside reference for every check here: Telegram Bot API spec, bot/sandbox/botapi/api.json.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from bot.sandbox.limits import Limit, LimitUnit, limit_from_description
from bot.sandbox.spec import SPEC_PATH_VARIABLE, BotApiSpec, SpecNotFound, load_spec, spec_path

PROJECT_ROOT = Path(__file__).resolve().parents[2]


def test_missing_spec_raises_an_error_that_says_how_to_fix_it(tmp_path: Path) -> None:
    missing = tmp_path / "nowhere" / "api.json"
    with pytest.raises(SpecNotFound, match=SPEC_PATH_VARIABLE) as raised:
        load_spec(missing)
    assert str(missing) in str(raised.value)


def test_spec_path_defaults_to_the_copy_inside_the_repository(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    monkeypatch.delenv(SPEC_PATH_VARIABLE, raising=False)
    assert spec_path() == PROJECT_ROOT / "bot" / "sandbox" / "botapi" / "api.json"
    assert spec_path().is_file()
    # The vendored copy keeps its licence and a note of its source and version beside it.
    notes = (spec_path().parent / "SOURCE.md").read_text(encoding="utf-8")
    assert "Bot API 10.1" in notes and "160fd99507e1c7c77e92dc90f5993d724735b51c" in notes
    assert "MIT License" in (spec_path().parent / "LICENSE").read_text(encoding="utf-8")
    monkeypatch.setenv(SPEC_PATH_VARIABLE, "/somewhere/else.json")
    assert spec_path() == Path("/somewhere/else.json")


def test_spec_has_the_methods_and_types_the_sandbox_serves(spec: BotApiSpec) -> None:
    # Telegram Bot API spec, bot/sandbox/botapi/api.json
    for name in ("getMe", "getUpdates", "sendMessage", "editMessageText", "answerCallbackQuery"):
        assert spec.method(name) is not None, name
    assert spec.methods["sendMessage"].fields["chat_id"].required
    assert spec.types["ChatMember"].subtypes[0] == "ChatMemberOwner"


# (owner, field, the phrase the spec's description must contain, the limit we must parse from it)
DOCUMENTED_LIMITS = [
    ("sendMessage", "text", "1-4096 characters", Limit(1, 4096, LimitUnit.CHARACTERS, True)),
    ("sendPhoto", "caption", "0-1024 characters", Limit(0, 1024, LimitUnit.CHARACTERS, True)),
    ("sendDocument", "caption", "0-1024 characters", Limit(0, 1024, LimitUnit.CHARACTERS, True)),
    ("InlineKeyboardButton", "callback_data", "1-64 bytes", Limit(1, 64, LimitUnit.BYTES)),
    ("answerCallbackQuery", "text", "0-200 characters", Limit(0, 200, LimitUnit.CHARACTERS)),
    ("BotCommand", "command", "1-32 characters", Limit(1, 32, LimitUnit.CHARACTERS)),
    ("BotCommand", "description", "1-256 characters", Limit(1, 256, LimitUnit.CHARACTERS)),
    ("setMyCommands", "commands", "At most 100 commands", Limit(0, 100, LimitUnit.ITEMS)),
    ("getUpdates", "limit", "Values between 1-100", Limit(1, 100, LimitUnit.VALUE)),
]


@pytest.mark.parametrize(("owner", "field", "phrase", "expected"), DOCUMENTED_LIMITS)
def test_parsed_limit_matches_the_spec_description(
    spec: BotApiSpec, owner: str, field: str, phrase: str, expected: Limit
) -> None:
    # Telegram Bot API spec, bot/sandbox/botapi/api.json: the phrase is quoted from the
    # field's description there, and the parser must turn exactly that phrase into the limit.
    holder = spec.methods.get(owner) or spec.types[owner]
    spec_field = holder.fields[field]
    assert phrase in spec_field.description
    assert spec_field.limit == expected


def test_every_documented_text_range_on_a_string_field_becomes_a_limit(spec: BotApiSpec) -> None:
    # Telegram Bot API spec, bot/sandbox/botapi/api.json: scan all String fields; each
    # "N-M characters|bytes" in a description must yield the first such range as the limit.
    phrase = re.compile(r"(\d+)-(\d+) (characters|bytes)", re.IGNORECASE)
    checked = 0
    for holder in [*spec.methods.values(), *spec.types.values()]:
        for spec_field in holder.fields.values():
            found = phrase.search(spec_field.description)
            if spec_field.types != ("String",) or found is None:
                continue
            checked += 1
            assert spec_field.limit is not None, (holder.name, spec_field.name)
            assert (spec_field.limit.low, spec_field.limit.high) == (
                int(found.group(1)),
                int(found.group(2)),
            )
            assert spec_field.limit.unit.value == found.group(3).lower()
    assert checked > 50  # the spec documents dozens of text limits; fewer means a parsing bug


@pytest.mark.parametrize(
    "description",
    [
        "A two-letter ISO 639-1 language code.",  # a standard's name, not a range
        "Unique identifier for the target chat",
    ],
)
def test_descriptions_without_a_text_range_give_no_string_limit(description: str) -> None:
    assert limit_from_description(("String",), description) is None


def test_a_range_without_unit_is_not_a_text_limit_but_is_a_number_limit() -> None:
    description = "The maximum number of gifts to be returned; 1-100. Defaults to 100."
    assert limit_from_description(("String",), description) is None
    assert limit_from_description(("Integer",), description) == Limit(1, 100, LimitUnit.VALUE)
