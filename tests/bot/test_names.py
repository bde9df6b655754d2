"""Names that would break tables: refused in room names, tidied in people's names.

Character classes from the Unicode Character Database (General_Category: Cc control, Cf
format, Zs space separator) as shipped with Python's ``unicodedata``; U+202E is RIGHT-TO-LEFT
OVERRIDE and U+2066..U+2069 the isolates of the bidirectional algorithm (UAX #9).
"""

from __future__ import annotations

import pytest
from flat_scenario import GROUP, RENT_TEXT, ROOMS, people

from bot.rounds.engine import Engine
from bot.rounds.errors import InvalidSetup
from bot.rounds.events import Actor, Configure, Join, OpenJoining
from bot.rounds.messages import Kind
from bot.rounds.names import person_name, room_name
from bot.rounds.round_settings import build_settings, check_rooms
from bot.rounds.setup_input import SetupInput, split_names
from bot.storage.sqlite import SqliteStore

BAD = [
    ("Bay\rroom", "U+000D"),
    ("Bay\nroom", "U+000A"),
    ("Bay\troom", "U+0009"),
    ("Bay\u202eroom", "U+202E"),  # right-to-left override
    ("Bay\u2066room", "U+2066"),  # left-to-right isolate
    ("Bay\u200broom", "U+200B"),  # zero-width space
    ("Bay\ufeffroom", "U+FEFF"),  # zero-width no-break space
    ("Bay\u2028room", "U+2028"),  # line separator
    ("Bay\x00room", "U+0000"),
]


@pytest.mark.parametrize(("name", "code"), BAD)
def test_room_names_with_invisible_characters_are_refused_in_one_line(name: str, code: str) -> None:
    with pytest.raises(InvalidSetup) as refused:
        check_rooms(split_names(["Loft", name]))
    message = str(refused.value)
    assert code in message and "\n" not in message and "\r" not in message
    assert "type the name again" in message


@pytest.mark.parametrize(("name", "code"), BAD)
def test_common_rooms_are_checked_as_well(name: str, code: str) -> None:
    # a room kept out of the round still appears in the written agreement
    with pytest.raises(InvalidSetup, match=code.replace("+", r"\+")):
        build_settings(SetupInput.parse(RENT_TEXT, ["Loft", "Attic", name], common=name))


def test_room_names_keep_letters_of_every_script_and_single_spaces() -> None:
    rooms = check_rooms(
        split_names(["Bay  room", "\u00e9tage\u00a0haut", "\u05d7\u05d3\u05e8", "Zimmer 3"])
    )
    assert rooms == ("Bay room", "\u00e9tage haut", "\u05d7\u05d3\u05e8", "Zimmer 3")
    with pytest.raises(InvalidSetup, match="must differ"):
        check_rooms(split_names(["Bay room", "Bay   room"]))


@pytest.mark.parametrize(
    ("raw", "tidy"),
    [
        ("Ana\tMaria", "Ana Maria"),
        ("  Ana    Maria  ", "Ana Maria"),
        ("Ana\r\nMaria", "Ana Maria"),
        ("Ana\u00a0\u2003Maria", "Ana Maria"),  # no-break space, em space
        ("\u202eAna\u202c", "Ana"),  # override and pop directional formatting
        ("A\u200bna", "Ana"),
        ("Ana\u2028Maria", "Ana Maria"),
        ("Ana\x07", "Ana"),
        ("\u200b\u202e", ""),
        # zero-width joiner in an emoji sequence and non-joiner in Persian stay
        ("Sam \U0001f469\u200d\U0001f527", "Sam \U0001f469\u200d\U0001f527"),
        (
            "\u0645\u06cc\u200c\u062e\u0648\u0627\u0645",
            "\u0645\u06cc\u200c\u062e\u0648\u0627\u0645",
        ),
    ],
)
def test_people_names_are_tidied(raw: str, tidy: str) -> None:
    assert person_name(raw) == tidy


def test_room_name_helper_tidies_spaces() -> None:
    assert room_name("  Bay \u2009 room ") == "Bay room"


async def test_a_member_joins_under_a_tidy_name(engine: Engine, store: SqliteStore) -> None:
    admin = people(1)[0]
    await engine.handle(Configure("c", GROUP, admin, SetupInput.parse(RENT_TEXT, ROOMS[:2])))
    await engine.handle(OpenJoining("o", GROUP, admin))
    await engine.handle(Join("j1", GROUP, admin))
    out = await engine.handle(Join("j2", GROUP, Actor(555, "\u202eNoor\t  \r\nB\u200b")))
    assert Kind.REFUSAL not in [m.kind for m in out]
    async with store.transaction() as tx:
        record = await tx.open_round(GROUP)
        assert record is not None
        names = [m.display_name for m in await tx.members(record.id)]
    assert names == [admin.display_name, "Noor B"]
