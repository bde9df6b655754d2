"""A local Telegram Bot API stand-in for tests: real HTTP on 127.0.0.1, checked against the spec.

Start one with ``async with BotApiStandIn() as standin:``, point a real PTB ``Bot`` or
``Application`` at ``standin.base_url``, and act as the flatmates through ``standin.world``.
"""

from bot.sandbox.errors import ApiError, SandboxError
from bot.sandbox.models import Button, SimChat, SimMessage, SimUser
from bot.sandbox.server import DEFAULT_TOKEN, ApiCall, BotApiStandIn
from bot.sandbox.spec import BotApiSpec, SpecNotFound, load_spec, spec_path
from bot.sandbox.validator import validate_call, validate_result
from bot.sandbox.world import CallbackRecord, World

__all__ = [
    "DEFAULT_TOKEN",
    "ApiCall",
    "ApiError",
    "BotApiSpec",
    "BotApiStandIn",
    "Button",
    "CallbackRecord",
    "SandboxError",
    "SimChat",
    "SimMessage",
    "SimUser",
    "SpecNotFound",
    "World",
    "load_spec",
    "spec_path",
    "validate_call",
    "validate_result",
]
