"""A local stand-in for the Telegram Bot API, served by tornado on 127.0.0.1.

The bot under test talks real HTTP to it through PTB, exactly as it would talk to Telegram:
every call is checked against the published spec, answered from a simulated world, and
recorded, so tests can assert on what the bot did and on anything it did wrong.
"""

from __future__ import annotations

import asyncio
import json
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from types import TracebackType
from typing import Any, TypeVar

from tornado.httpserver import HTTPServer
from tornado.netutil import bind_sockets
from tornado.web import Application, RequestHandler

from bot.sandbox.errors import (
    ApiError,
    SandboxError,
    bad_request,
    injected,
    not_found,
    unauthorized,
)
from bot.sandbox.methods import BotApiMethods
from bot.sandbox.models import SimUser
from bot.sandbox.spec import BotApiSpec, load_spec
from bot.sandbox.validator import validate_call, validate_result
from bot.sandbox.webhook import Target, WebhookDelivery
from bot.sandbox.wire import UploadedFile, decode_form, decode_json_body
from bot.sandbox.world import World

DEFAULT_TOKEN = "7000000001:sandbox-token-for-local-tests"
DEFAULT_BOT_USERNAME = "flatpact_sandbox_bot"
LOOPBACK = "127.0.0.1"
Found = TypeVar("Found")


@dataclass
class ApiCall:
    """One request the bot made, as decoded, and the HTTP status it got back."""

    method: str
    params: dict[str, Any]
    status: int = 200
    violations: list[str] = field(default_factory=list)
    #: ``time.perf_counter()`` when the call arrived (benchmarks)
    at: float = field(default_factory=time.perf_counter)


class BotApiStandIn:
    """Serve the Bot API for one bot token; start() binds an ephemeral port on 127.0.0.1.

    Use ``async with BotApiStandIn() as standin:`` and point PTB at ``standin.base_url`` and
    ``standin.base_file_url``. Tests act through ``standin.world``.
    """

    def __init__(
        self,
        *,
        token: str = DEFAULT_TOKEN,
        bot_username: str = DEFAULT_BOT_USERNAME,
        bot_name: str = "Flatpact (sandbox)",
        spec: BotApiSpec | None = None,
        clock: Callable[[], int] | None = None,
    ) -> None:
        bot_id = token.split(":", 1)[0]
        if not bot_id.isdigit():
            raise SandboxError(f"Token {token!r} must look like '<digits>:<secret>', as Telegram's")
        self.token = token
        self.spec = spec or load_spec()
        bot_user = SimUser(int(bot_id), bot_name, bot_username, is_bot=True)
        self.world = World(bot_user, clock)
        self.methods = BotApiMethods(self.world)
        self.violations: list[str] = []
        self.response_violations: list[str] = []
        self.unimplemented: list[str] = []
        self.calls: list[ApiCall] = []
        self._faults: dict[str, list[ApiError]] = {}
        self._held: dict[int, asyncio.Event] = {}
        self.parked = 0
        self._server: HTTPServer | None = None
        self.port: int | None = None
        self.webhook = WebhookDelivery(self.world.updates, self._webhook_target, self.world.changed)

    # --- lifecycle --------------------------------------------------------------------------

    async def start(self) -> None:
        """Listen on 127.0.0.1 at a port the OS picks (never a fixed port, never 0.0.0.0)."""
        if self._server is not None:
            raise SandboxError("This stand-in is already running; stop() it before start()")
        sockets = bind_sockets(0, LOOPBACK)
        routes = [
            (r"/bot(?P<token>[^/]+)/(?P<method>[A-Za-z0-9_]+)", _ApiHandler, {"standin": self}),
            (r"/file/bot(?P<token>[^/]+)/(?P<path>.+)", _FileHandler, {"standin": self}),
        ]
        self._server = HTTPServer(Application(routes))
        self._server.add_sockets(sockets)
        self.port = sockets[0].getsockname()[1]
        self.world.updates.closing = False
        self.webhook.start()

    async def stop(self) -> None:
        """End waiting long polls, stop listening and close every open connection."""
        if self._server is None:
            return
        await self.webhook.stop()
        self.world.updates.closing = True
        self.world.changed.notify()
        self._server.stop()
        await self._server.close_all_connections()
        self._server = None

    async def __aenter__(self) -> BotApiStandIn:
        await self.start()
        return self

    async def __aexit__(
        self,
        exc_type: type[BaseException] | None,
        exc: BaseException | None,
        traceback: TracebackType | None,
    ) -> None:
        await self.stop()

    @property
    def base_url(self) -> str:
        """What to pass as PTB's base_url (PTB appends the token)."""
        return f"http://{LOOPBACK}:{self._running_port()}/bot"

    @property
    def base_file_url(self) -> str:
        """What to pass as PTB's base_file_url (PTB appends the token)."""
        return f"http://{LOOPBACK}:{self._running_port()}/file/bot"

    def _webhook_target(self) -> Target | None:
        settings = self.methods.webhook
        return Target(settings.url, settings.secret_token) if settings.url else None

    def _running_port(self) -> int:
        if self.port is None:
            raise SandboxError("The stand-in has no address yet: await standin.start() first")
        return self.port

    # --- test controls ----------------------------------------------------------------------

    def fail_next(
        self,
        method: str,
        times: int = 1,
        *,
        error_code: int = 429,
        retry_after: int | None = 1,
        description: str | None = None,
    ) -> None:
        """Answer the next `times` valid calls of `method` with an error (429 flood by default)."""
        if self.spec.method(method) is None:
            raise SandboxError(f"{method!r} is not a Bot API method; check the spelling")
        queued = self._faults.setdefault(method.lower(), [])
        queued.extend(injected(error_code, retry_after, description) for _ in range(times))

    def hold_chat(self, chat_id: int) -> None:
        """Calls addressed to this chat wait until :meth:`release_chat` (a slow group chat).

        Simulates a chat that Telegram is slow to serve (flood waits, a congested group), so a
        test can show what the bot does meanwhile; ``parked`` counts the calls now waiting.
        """
        self._held.setdefault(chat_id, asyncio.Event())

    def release_chat(self, chat_id: int) -> None:
        """Let the calls held for this chat (and later ones) through."""
        gate = self._held.pop(chat_id, None)
        if gate is not None:
            gate.set()

    def calls_to(self, method: str) -> list[dict[str, Any]]:
        """Parameters of every successful call to `method`, oldest first."""
        wanted = method.lower()
        return [c.params for c in self.calls if c.method.lower() == wanted and c.status == 200]

    async def wait_for(self, predicate: Callable[[], Found | None], timeout: float = 5.0) -> Found:
        """Wait until predicate (re-checked after every call and world change) is truthy."""
        return await self.world.wait_for(predicate, timeout)

    # --- handling one call ------------------------------------------------------------------

    async def handle(self, token: str, method: str, params: dict[str, Any]) -> tuple[int, Any]:
        """Validate, maybe inject a fault, run the method; returns (HTTP status, JSON body)."""
        call = ApiCall(method, params)
        self.calls.append(call)
        await self._wait_if_held(params)
        try:
            result = await self._answer(token, call)
        except ApiError as error:
            call.status = error.error_code
            return error.error_code, error.to_json()
        finally:
            self.world.changed.notify()
        return 200, {"ok": True, "result": result}

    async def _wait_if_held(self, params: dict[str, Any]) -> None:
        try:
            chat_id = int(params.get("chat_id", 0))
        except (TypeError, ValueError):
            return
        gate = self._held.get(chat_id)
        if gate is None:
            return
        self.parked += 1
        self.world.changed.notify()
        try:
            await gate.wait()
        finally:
            self.parked -= 1

    async def _answer(self, token: str, call: ApiCall) -> Any:
        if token != self.token:
            raise unauthorized()
        spec_method = self.spec.method(call.method)
        call.violations = validate_call(self.spec, call.method, call.params)
        self.violations.extend(call.violations)
        if spec_method is None:
            raise not_found()
        if call.violations:
            raise bad_request("; ".join(call.violations))
        faults = self._faults.get(call.method.lower())
        if faults:
            raise faults.pop(0)
        handler = self.methods.handler_for(call.method)
        if handler is None:
            self.unimplemented.append(call.method)
            raise bad_request(
                f"the sandbox does not implement {spec_method.name} yet; "
                "add it to bot/sandbox/methods.py"
            )
        result = await handler(call.params)
        self.response_violations.extend(validate_result(self.spec, spec_method.name, result))
        return result


class _ApiHandler(RequestHandler):
    """POST or GET /bot<token>/<method>, form, multipart or JSON encoded."""

    def initialize(self, standin: BotApiStandIn) -> None:
        self.standin = standin

    async def get(self, token: str, method: str) -> None:
        await self.post(token, method)

    async def post(self, token: str, method: str) -> None:
        try:
            params = self._parameters(method)
        except ValueError as error:
            status, body = 400, bad_request(f"can't parse request: {error}").to_json()
        else:
            status, body = await self.standin.handle(token, method, params)
        self.set_status(status)
        self.set_header("Content-Type", "application/json")
        self.finish(json.dumps(body))

    def _parameters(self, method: str) -> dict[str, Any]:
        content_type = self.request.headers.get("Content-Type", "")
        if content_type.startswith("application/json"):
            return decode_json_body(self.request.body)
        form = {name: values[-1].decode("utf-8") for name, values in self.request.arguments.items()}
        files = {
            name: UploadedFile(name, upload.filename, upload.body, upload.content_type)
            for name, uploads in self.request.files.items()
            for upload in uploads[-1:]
        }
        return decode_form(self.standin.spec.method(method), form, files)


class _FileHandler(RequestHandler):
    """GET /file/bot<token>/<file_path>: the bytes of a file the bot uploaded."""

    def initialize(self, standin: BotApiStandIn) -> None:
        self.standin = standin

    def get(self, token: str, path: str) -> None:
        stored = next((f for f in self.standin.world.files.values() if f.file_path == path), None)
        if token != self.standin.token or stored is None:
            self.set_status(404)
            self.finish(json.dumps(not_found().to_json()))
            return
        self.set_header("Content-Type", stored.mime_type)
        self.finish(stored.content)
