"""Checking calls (and our own responses) against the Bot API spec.

Every violation is a sentence naming the method, the field path and what to change, so a failing
test tells the bot author exactly which call to fix.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from typing import Any

from bot.sandbox.limits import Limit, LimitUnit
from bot.sandbox.markup import visible_text
from bot.sandbox.spec import ARRAY_PREFIX, BotApiSpec, FieldSpec, ObjectSpec
from bot.sandbox.wire import UploadedFile

_REQUIRED_UNLESS = re.compile(
    r"required if (\w+)(?: and (\w+))? (?:is not|are not|isn't|aren't) specified", re.IGNORECASE
)


def _json_kind(value: Any) -> str:
    if isinstance(value, UploadedFile):
        return "an uploaded file"
    if isinstance(value, bool):
        return "a boolean"
    if isinstance(value, int):
        return "an integer"
    if isinstance(value, float):
        return "a float"
    if isinstance(value, str):
        return "a string"
    if isinstance(value, list):
        return "an array"
    if isinstance(value, dict):
        return "an object"
    return type(value).__name__


def _primitive_fits(type_name: str, value: Any) -> bool | None:
    """Whether value fits a primitive type, or None if type_name is not primitive."""
    checks: dict[str, bool] = {
        "Integer": isinstance(value, int) and not isinstance(value, bool),
        "Float": isinstance(value, int | float) and not isinstance(value, bool),
        "String": isinstance(value, str),
        "Boolean": isinstance(value, bool),
        "InputFile": isinstance(value, UploadedFile),
    }
    return checks.get(type_name)


def _shape_fits(type_name: str, value: Any) -> bool:
    """A first, cheap test: is the value even the right kind of JSON for this type?"""
    primitive = _primitive_fits(type_name, value)
    if primitive is not None:
        return primitive
    if type_name.startswith(ARRAY_PREFIX):
        return isinstance(value, list)
    return isinstance(value, dict)


class SpecValidator:
    """Validates values against the spec; check_limits is off for responses we produce."""

    def __init__(self, spec: BotApiSpec, *, check_limits: bool = True) -> None:
        self.spec = spec
        self.check_limits = check_limits

    def value(self, types: tuple[str, ...], value: Any, path: str) -> list[str]:
        """Violations of value against a union of declared types (empty if any type fits)."""
        candidates = [t for t in types if _shape_fits(t, value)]
        if not candidates:
            wanted = " or ".join(types)
            return [f"{path} must be {wanted}, but {_json_kind(value)} was sent"]
        best: list[str] | None = None
        for type_name in candidates:
            found = self._one_type(type_name, value, path)
            if not found:
                return []
            if best is None or len(found) < len(best):
                best = found
        return best or []

    def _one_type(self, type_name: str, value: Any, path: str) -> list[str]:
        if _primitive_fits(type_name, value) is not None:
            return []
        if type_name.startswith(ARRAY_PREFIX):
            item_type = type_name.removeprefix(ARRAY_PREFIX)
            found: list[str] = []
            for index, item in enumerate(value):
                found += self.value((item_type,), item, f"{path}[{index}]")
            return found
        return self.object(type_name, value, path)

    def object(self, type_name: str, value: Mapping[str, Any], path: str) -> list[str]:
        """Violations of a JSON object against a named type, trying subtypes of abstract ones."""
        spec_type = self.spec.types.get(type_name)
        if spec_type is None:
            return [f"{path}: the spec has no type {type_name}; this is a sandbox bug"]
        if spec_type.subtypes:
            return self.value(spec_type.subtypes, value, path)
        if not spec_type.fields:
            return []
        return self.fields(spec_type, value, path)

    def fields(self, owner: ObjectSpec, given: Mapping[str, Any], path: str) -> list[str]:
        """Required, unknown, conditionally required, typed and limited fields of one object."""
        found = [
            f"{path}.{name} is required by the spec but was not sent"
            for name, spec_field in owner.fields.items()
            if spec_field.required and name not in given
        ]
        known = ", ".join(owner.fields) or "none"
        found += [
            f"{path}.{name} is not a field of {owner.name} (known: {known})"
            for name in given
            if name not in owner.fields
        ]
        found += _conditionally_missing(owner, given, path)
        for name, item in given.items():
            if name in owner.fields:
                found += self._field_value(owner.fields[name], item, given, f"{path}.{name}")
        return found

    def _field_value(
        self, spec_field: FieldSpec, item: Any, siblings: Mapping[str, Any], path: str
    ) -> list[str]:
        problems = self.value(spec_field.types, item, path)
        if not problems and self.check_limits and spec_field.limit is not None:
            problems = _limit_violations(spec_field, spec_field.limit, item, siblings, path)
        return problems


def _conditionally_missing(owner: ObjectSpec, given: Mapping[str, Any], path: str) -> list[str]:
    """Fields documented as "Required if X is not specified" when X is absent too."""
    found: list[str] = []
    for name, field in owner.fields.items():
        match = _REQUIRED_UNLESS.search(field.description)
        if match is None or name in given:
            continue
        together = [alt for alt in match.groups() if alt]
        if not all(alt in given for alt in together):
            verb = "are" if len(together) > 1 else "is"
            found.append(f"{path}.{name} is required unless {' and '.join(together)} {verb} sent")
    return found


def _measure(limit: Limit, value: Any, siblings: Mapping[str, Any]) -> int | float | None:
    if limit.unit is LimitUnit.ITEMS:
        return len(value) if isinstance(value, list) else None
    if limit.unit is LimitUnit.VALUE:
        return value if isinstance(value, int | float) else None
    if not isinstance(value, str):
        return None
    text = value
    if limit.after_entity_parsing:
        text = visible_text(value, siblings.get("parse_mode"))
    if limit.unit is LimitUnit.BYTES:
        return len(text.encode("utf-8"))
    return len(text)


def _limit_violations(
    field: FieldSpec, limit: Limit, value: Any, siblings: Mapping[str, Any], path: str
) -> list[str]:
    measured = _measure(limit, value, siblings)
    if measured is None or limit.low <= measured <= limit.high:
        return []
    unit = "" if limit.unit is LimitUnit.VALUE else f" {limit.unit.value}"
    return [
        f"{path} is {measured}{unit}, but the spec allows {limit.describe()} "
        f"(documented: {field.description!r}); bring it within that range"
    ]


def validate_call(spec: BotApiSpec, method_name: str, params: Mapping[str, Any]) -> list[str]:
    """Violations of one Bot API call: unknown method, missing/unknown fields, types, limits."""
    method = spec.method(method_name)
    if method is None:
        return [f"{method_name} is not a Bot API method ({spec.version}); check the spelling"]
    return SpecValidator(spec).fields(method, params, method.name)


def validate_result(spec: BotApiSpec, method_name: str, result: Any) -> list[str]:
    """Violations of a response result against the method's documented return types."""
    method = spec.method(method_name)
    if method is None:
        return [f"{method_name} is not a Bot API method"]
    checker = SpecValidator(spec, check_limits=False)
    return checker.value(method.returns, result, f"{method.name} result")
