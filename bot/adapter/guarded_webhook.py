"""The webhook endpoint: Telegram's secret checked in constant time, bodies capped, then PTB.

PTB's own webhook server (``Updater.start_webhook``) compares the secret-token header with
``!=`` and inherits tornado's default body limit of 100 MB (tornado ``HTTPServer``
``max_body_size``). PTB documents running its ``Application`` behind any web server of one's
own (the "custom webhook" example: the server decodes the ``Update`` and puts it on
``application.update_queue``), so this module is that server, on the same tornado PTB uses:

* a request without the right ``X-Telegram-Bot-Api-Secret-Token`` is refused with 403 before
  its body is parsed, by :func:`bot.adapter.webhook_guard.verify` (``hmac.compare_digest``);
* a body above :data:`MAX_BODY_BYTES` is refused by tornado before it is buffered, so a
  published port cannot be made to hold 100 MB per connection;
* anything but a JSON ``Update`` is refused with 400 and never reaches a handler.

A deployment behind the proxies in ``deploy/`` is checked twice (the proxy refuses a wrong
header and caps the body at 1 MB too); a directly published port has this barrier alone.
"""

from __future__ import annotations

import json
import logging
from dataclasses import dataclass
from http import HTTPStatus
from typing import Any

from telegram import Update
from telegram.ext import ExtBot
from tornado.httpserver import HTTPServer
from tornado.web import Application, RequestHandler

from bot.adapter.webhook_guard import verify

log = logging.getLogger(__name__)
#: An update is a few kilobytes of JSON; 1 MiB leaves ample room (common practice, and the
#: limit the Caddy and nginx examples in deploy/ set at the edge).
MAX_BODY_BYTES = 1024 * 1024
JSON_MEDIA_TYPE = "application/json"


class _UpdateEndpoint(RequestHandler):
    """POST /telegram: check the secret, decode one Update, queue it for the Application."""

    SUPPORTED_METHODS = ("POST",)

    def initialize(self, app: Any, secret: str | None) -> None:
        self.app = app
        self.secret = secret

    async def post(self) -> None:
        if self.secret is not None:
            verdict = verify(self.request.headers, self.secret)
            if not verdict.ok:
                # debug, as PTB does: anyone can send these, and a flood must not fill the log
                log.debug("webhook request refused: %s", verdict.reason)
                self._answer(verdict.status)
                return
        media_type = self.request.headers.get("Content-Type", "").split(";")[0].strip().lower()
        if media_type != JSON_MEDIA_TYPE:
            self._answer(HTTPStatus.UNSUPPORTED_MEDIA_TYPE)
            return
        try:
            data = json.loads(self.request.body)
            update = Update.de_json(data, self.app.bot) if isinstance(data, dict) else None
        except Exception:  # any malformed body: refused, never handled
            update = None
        if update is None:
            log.debug("webhook request refused: the body is not a Telegram update")
            self._answer(HTTPStatus.BAD_REQUEST)
            return
        if isinstance(self.app.bot, ExtBot):
            self.app.bot.insert_callback_data(update)
        await self.app.update_queue.put(update)
        self._answer(HTTPStatus.OK)

    def _answer(self, status: int) -> None:
        self.set_status(status)
        self.finish()

    def log_exception(self, *args: Any) -> None:
        """Tornado would log the request line; ours say what happened without the headers."""
        log.debug("webhook request failed", exc_info=args[1] if len(args) > 1 else None)


@dataclass
class GuardedWebhook:
    """A listening endpoint; :meth:`stop` closes it and every open connection."""

    server: HTTPServer

    async def stop(self) -> None:
        self.server.stop()
        await self.server.close_all_connections()


async def start(
    app: Any,
    *,
    listen: str,
    port: int,
    path: str,
    url: str,
    secret: str | None,
    allowed_updates: list[str],
) -> GuardedWebhook:
    """Listen on ``listen:port`` at ``/path``, then tell Telegram (``setWebhook``) to post there."""
    routes = [(rf"/{path}/?", _UpdateEndpoint, {"app": app, "secret": secret})]
    server = HTTPServer(
        Application(routes), max_body_size=MAX_BODY_BYTES, max_buffer_size=MAX_BODY_BYTES
    )
    server.listen(port, address=listen)
    try:
        await app.bot.set_webhook(url=url, secret_token=secret, allowed_updates=allowed_updates)
    except BaseException:
        server.stop()
        raise
    return GuardedWebhook(server)
