"""Documented limits, read out of the spec's prose instead of a hand-written table.

The Bot API states limits in field descriptions ("1-4096 characters", "1-64 bytes", "Values
between 1-100 are accepted", "At most 100 commands can be specified"). Parsing them keeps the
sandbox in step with whatever spec file it is given.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from enum import Enum

_RANGE = re.compile(r"(?<![\w^.])(\d+)-(\d+)(?:\s+(characters|bytes))?\b", re.IGNORECASE)
_AT_MOST = re.compile(r"\bat most (\d+) [a-z]", re.IGNORECASE)
_AFTER_PARSING = re.compile(r"after entit(?:y|ies) parsing", re.IGNORECASE)


class LimitUnit(Enum):
    """What a limit counts."""

    CHARACTERS = "characters"
    BYTES = "bytes"
    ITEMS = "items"
    VALUE = "value"


@dataclass(frozen=True)
class Limit:
    """An inclusive range, and whether text is measured after Telegram parses the markup."""

    low: int
    high: int
    unit: LimitUnit
    after_entity_parsing: bool = False

    def describe(self) -> str:
        """The range in the spec's own phrasing, for violation messages."""
        if self.unit is LimitUnit.VALUE:
            return f"{self.low}-{self.high}"
        return f"{self.low}-{self.high} {self.unit.value}"


def _is_array(types: tuple[str, ...]) -> bool:
    return all(t.startswith("Array of ") for t in types)


def _text_limit(description: str) -> Limit | None:
    for match in _RANGE.finditer(description):
        unit = match.group(3)
        if unit:
            return Limit(
                low=int(match.group(1)),
                high=int(match.group(2)),
                unit=LimitUnit(unit.lower()),
                after_entity_parsing=bool(_AFTER_PARSING.search(description)),
            )
    return None


def _bare_range(description: str, unit: LimitUnit) -> Limit | None:
    for match in _RANGE.finditer(description):
        if match.group(3) is None:
            return Limit(low=int(match.group(1)), high=int(match.group(2)), unit=unit)
    return None


def _array_limit(description: str) -> Limit | None:
    ranged = _bare_range(description, LimitUnit.ITEMS)
    if ranged is not None:
        return ranged
    at_most = _AT_MOST.search(description)
    if at_most is not None:
        return Limit(low=0, high=int(at_most.group(1)), unit=LimitUnit.ITEMS)
    return None


def limit_from_description(types: tuple[str, ...], description: str) -> Limit | None:
    """The documented limit of a field, interpreted according to the field's type.

    Strings take only ranges with a unit (characters or bytes); numbers take bare ranges;
    arrays take bare ranges or "at most N" as item counts. Anything else has no limit.
    """
    if types == ("String",):
        return _text_limit(description)
    if types in (("Integer",), ("Float",)):
        return _bare_range(description, LimitUnit.VALUE)
    if types and _is_array(types):
        return _array_limit(description)
    return None
