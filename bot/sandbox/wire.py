"""Turning an HTTP request into the typed parameters of a Bot API call.

PTB sends form fields whose string values are raw and whose other values are JSON-encoded
(multipart/form-data when files are attached). A form value "42" could be the Integer 42 or the
String "42", so decoding follows the spec's declared types, as Telegram's server does. Values
that fit none of the declared types stay strings, and the validator reports them.
"""

from __future__ import annotations

import json
import re
from dataclasses import dataclass
from typing import Any

from bot.sandbox.spec import ARRAY_PREFIX, FieldSpec, ObjectSpec

_INTEGER = re.compile(r"-?\d+")
_ATTACH_PREFIX = "attach://"


@dataclass(frozen=True)
class UploadedFile:
    """One multipart file part: the part's name, the client's filename, the bytes."""

    part_name: str
    filename: str
    content: bytes
    content_type: str


def _as_integer(raw: str) -> int | None:
    return int(raw) if _INTEGER.fullmatch(raw) else None


def _as_float(raw: str) -> float | None:
    try:
        return float(raw)
    except ValueError:
        return None


def _as_boolean(raw: str) -> bool | None:
    return {"true": True, "false": False}.get(raw.lower())


def _as_json(raw: str, expected: type) -> Any:
    try:
        decoded = json.loads(raw)
    except ValueError:
        return None
    return decoded if isinstance(decoded, expected) else None


def _decode_as(type_name: str, raw: str, files: dict[str, UploadedFile]) -> Any:
    """The value of raw read as one declared type, or None if it cannot be that type."""
    if type_name == "Integer":
        return _as_integer(raw)
    if type_name == "Float":
        return _as_float(raw)
    if type_name == "Boolean":
        return _as_boolean(raw)
    if type_name == "String":
        return raw
    if type_name == "InputFile":
        name = raw.removeprefix(_ATTACH_PREFIX)
        return files.get(name) if raw.startswith(_ATTACH_PREFIX) else None
    if type_name.startswith(ARRAY_PREFIX):
        return _as_json(raw, list)
    return _as_json(raw, dict)


def decode_field(field: FieldSpec | None, raw: str, files: dict[str, UploadedFile]) -> Any:
    """Decode one form value; String is tried last so "42" becomes 42 for Integer|String."""
    if field is None:
        return _as_json(raw, object) if raw[:1] in "[{" else raw
    preferred = sorted(field.types, key=lambda t: t == "String")
    for type_name in preferred:
        value = _decode_as(type_name, raw, files)
        if value is not None:
            return value
    return raw


def _resolve_attachments(value: Any, files: dict[str, UploadedFile], used: set[str]) -> Any:
    """Replace "attach://name" strings nested in JSON (e.g. InputMedia) with their files."""
    if isinstance(value, str) and value.startswith(_ATTACH_PREFIX):
        name = value.removeprefix(_ATTACH_PREFIX)
        if name in files:
            used.add(name)
            return files[name]
    if isinstance(value, list):
        return [_resolve_attachments(item, files, used) for item in value]
    if isinstance(value, dict):
        return {key: _resolve_attachments(item, files, used) for key, item in value.items()}
    return value


def decode_form(
    method: ObjectSpec | None, form: dict[str, str], files: dict[str, UploadedFile]
) -> dict[str, Any]:
    """All parameters of a form or multipart call; unreferenced file parts become parameters."""
    fields = method.fields if method else {}
    used: set[str] = set()
    decoded: dict[str, Any] = {}
    for name, raw in form.items():
        if raw.startswith(_ATTACH_PREFIX):
            used.add(raw.removeprefix(_ATTACH_PREFIX))
        decoded[name] = _resolve_attachments(
            decode_field(fields.get(name), raw, files), files, used
        )
    for part_name, upload in files.items():
        if part_name not in used and part_name not in decoded:
            decoded[part_name] = upload
    return decoded


def decode_json_body(body: bytes) -> dict[str, Any]:
    """Parameters sent as one JSON object (another way Telegram accepts calls)."""
    decoded = json.loads(body or b"{}")
    if not isinstance(decoded, dict):
        raise ValueError("a JSON request body must be an object of parameters")
    return decoded
