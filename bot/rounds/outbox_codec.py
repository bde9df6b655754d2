"""Outgoing messages as JSON text, so the engine can store them with the event that made them.

The outbox row is written in the event's own transaction; the adapter later reads it back and
sends it. The format is our own: ``{"to": [chat_id, private], "kind": ..., "facts_type": ...,
"facts": {...}, "choices": [[action, token, room], ...], "ref": ...}``.
"""

from __future__ import annotations

import dataclasses
import json
from typing import Any

from bot.rounds.errors import StorageFault
from bot.rounds.messages import (
    Action,
    AgreementFacts,
    AgreementLine,
    AnswerLine,
    ChangeFacts,
    Choice,
    DisagreeFacts,
    DivisionFacts,
    DivisionLine,
    EarlierFacts,
    Facts,
    Kind,
    MyAnswersFacts,
    Outgoing,
    ProgressFacts,
    PromptFacts,
    QuestionFacts,
    Recipient,
    RefusalFacts,
    RoughFacts,
    RoundFacts,
    SplitNoteFacts,
    WaitingFacts,
)

_FACT_TYPES: dict[str, type[Any]] = {
    cls.__name__: cls
    for cls in (
        RoughFacts,
        RoundFacts,
        QuestionFacts,
        ProgressFacts,
        DivisionFacts,
        PromptFacts,
        WaitingFacts,
        MyAnswersFacts,
        RefusalFacts,
        EarlierFacts,
        AgreementFacts,
        RoughFacts,
        ChangeFacts,
        DisagreeFacts,
        SplitNoteFacts,
    )
}
#: Facts whose ``lines`` field holds nested records.
_LINE_TYPES: dict[str, type[Any]] = {
    DivisionFacts.__name__: DivisionLine,
    MyAnswersFacts.__name__: AnswerLine,
    AgreementFacts.__name__: AgreementLine,
}


def encode(message: Outgoing) -> str:
    """The message as compact JSON text."""
    return json.dumps(
        {
            "to": [message.to.chat_id, message.to.private],
            "kind": message.kind.value,
            "facts_type": type(message.facts).__name__,
            "facts": dataclasses.asdict(message.facts),
            "choices": [[c.action.value, c.token, c.room] for c in message.choices],
            "ref": message.ref,
        },
        separators=(",", ":"),
        sort_keys=True,
    )


def decode(text: str) -> Outgoing:
    """The message :func:`encode` wrote; damaged text is a :class:`StorageFault`."""
    try:
        data = json.loads(text)
        facts = _facts(data["facts_type"], data["facts"])
        choices = tuple(Choice(Action(a), str(t), r) for a, t, r in data["choices"])
        chat_id, private = data["to"]
        return Outgoing(
            Recipient(int(chat_id), bool(private)), Kind(data["kind"]), facts, choices, data["ref"]
        )
    except (KeyError, TypeError, ValueError) as exc:
        raise StorageFault(f"an outbox entry cannot be read back: {exc}") from exc


def encode_facts(facts: Facts) -> str:
    """Facts alone as JSON text (the stored written agreement)."""
    return json.dumps(
        {"facts_type": type(facts).__name__, "facts": dataclasses.asdict(facts)},
        separators=(",", ":"),
        sort_keys=True,
    )


def decode_facts(text: str) -> Facts:
    """The facts :func:`encode_facts` wrote; damaged text is a :class:`StorageFault`."""
    try:
        data = json.loads(text)
        return _facts(data["facts_type"], data["facts"])
    except (KeyError, TypeError, ValueError) as exc:
        raise StorageFault(f"stored facts cannot be read back: {exc}") from exc


def _facts(type_name: str, fields: dict[str, Any]) -> Facts:
    cls = _FACT_TYPES[type_name]
    line_type = _LINE_TYPES.get(type_name)
    values = {name: _tupled(value) for name, value in fields.items()}
    if line_type is not None:
        values["lines"] = tuple(line_type(**_untuple_line(line)) for line in fields["lines"])
    facts: Facts = cls(**values)
    return facts


def _untuple_line(line: dict[str, Any]) -> dict[str, Any]:
    return {name: _tupled(value) for name, value in line.items()}


def _tupled(value: Any) -> Any:
    """JSON arrays back to the tuples the frozen dataclasses hold."""
    if isinstance(value, list):
        return tuple(_tupled(item) for item in value)
    return value
