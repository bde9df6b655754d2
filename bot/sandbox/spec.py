"""The machine-readable Telegram Bot API spec, loaded once and looked up by name.

The sandbox checks every call the bot makes against this file rather than against our own idea
of the API, so a test that passes here passes because Telegram's documentation allows the call.
"""

from __future__ import annotations

import json
import os
from dataclasses import dataclass
from functools import cache
from pathlib import Path
from typing import Any

from bot.sandbox.limits import Limit, limit_from_description

SPEC_PATH_VARIABLE = "FLATPACT_BOT_API_SPEC"
PRIMITIVE_TYPES = frozenset({"Integer", "String", "Boolean", "Float", "InputFile"})
ARRAY_PREFIX = "Array of "


class SpecNotFound(FileNotFoundError):
    """The spec file is missing (only possible when ``$FLATPACT_BOT_API_SPEC`` points nowhere)."""


#: The vendored copy (see ``botapi/SOURCE.md`` for its source, version and licence).
VENDORED_SPEC = Path(__file__).resolve().parent / "botapi" / "api.json"


def spec_path() -> Path:
    """Where the spec is read from: ``$FLATPACT_BOT_API_SPEC`` if set, else the vendored copy."""
    configured = os.environ.get(SPEC_PATH_VARIABLE)
    if configured:
        return Path(configured)
    return VENDORED_SPEC


@dataclass(frozen=True)
class FieldSpec:
    """One parameter of a method or one field of a type, with its parsed documented limit."""

    name: str
    types: tuple[str, ...]
    required: bool
    description: str
    limit: Limit | None


@dataclass(frozen=True)
class ObjectSpec:
    """A method or a type: its fields by name, and for abstract types the concrete subtypes."""

    name: str
    fields: dict[str, FieldSpec]
    subtypes: tuple[str, ...]
    returns: tuple[str, ...]


@dataclass(frozen=True)
class BotApiSpec:
    """The whole spec: methods and types by their exact (case-sensitive) names."""

    version: str
    methods: dict[str, ObjectSpec]
    types: dict[str, ObjectSpec]

    def method(self, name: str) -> ObjectSpec | None:
        """The method named exactly so; Telegram also accepts any letter case, hence the scan."""
        if name in self.methods:
            return self.methods[name]
        lowered = name.lower()
        return next((m for key, m in self.methods.items() if key.lower() == lowered), None)


def _field_from_json(raw: dict[str, Any]) -> FieldSpec:
    types = tuple(raw["types"])
    return FieldSpec(
        name=raw["name"],
        types=types,
        required=bool(raw["required"]),
        description=raw.get("description", ""),
        limit=limit_from_description(types, raw.get("description", "")),
    )


def _object_from_json(raw: dict[str, Any]) -> ObjectSpec:
    fields = [_field_from_json(f) for f in raw.get("fields", [])]
    return ObjectSpec(
        name=raw["name"],
        fields={f.name: f for f in fields},
        subtypes=tuple(raw.get("subtypes", ())),
        returns=tuple(raw.get("returns", ())),
    )


def parse_spec(document: dict[str, Any]) -> BotApiSpec:
    """Turn the decoded api.json document into lookup tables."""
    return BotApiSpec(
        version=document.get("version", "unknown"),
        methods={name: _object_from_json(m) for name, m in document["methods"].items()},
        types={name: _object_from_json(t) for name, t in document["types"].items()},
    )


@cache
def _load_cached(path: Path) -> BotApiSpec:
    with path.open(encoding="utf-8") as handle:
        return parse_spec(json.load(handle))


def load_spec(path: Path | None = None) -> BotApiSpec:
    """Load (and cache) the spec; raise SpecNotFound saying how to point at it if it is absent."""
    resolved = path or spec_path()
    if not resolved.is_file():
        raise SpecNotFound(
            f"Bot API spec not found at {resolved}: set {SPEC_PATH_VARIABLE} to the path of an "
            f"api.json, or unset it to use the copy shipped with Flatpact ({VENDORED_SPEC})"
        )
    return _load_cached(resolved.resolve())
