"""The webhook endpoint in front of PTB: secret checked first, bodies capped, junk refused.

Outside references: Telegram Bot API spec, setWebhook (updates arrive as HTTPS POSTs of a
JSON-serialised ``Update``; ``secret_token`` comes back in the header
``X-Telegram-Bot-Api-Secret-Token``), checked call by call by the stand-in fixture; tornado's
``HTTPServer`` answers a body over ``max_body_size`` without handing it to the application
(tornado docs, ``tornado.httpserver``). The flat is invented.
"""

from __future__ import annotations

import json
import socket
from pathlib import Path
from typing import Any

import httpx

from bot.adapter.application import Webhook, running
from bot.adapter.guarded_webhook import MAX_BODY_BYTES
from bot.adapter.webhook_guard import SECRET_HEADER
from bot.sandbox import BotApiStandIn
from tests.adapter.harness import app_for

SECRET = "hazel-court-hook-secret"


def _free_port() -> int:
    with socket.socket() as probe:
        probe.bind(("127.0.0.1", 0))
        return int(probe.getsockname()[1])


def _update(text: str, update_id: int = 77) -> dict[str, Any]:
    return {
        "update_id": update_id,
        "message": {
            "message_id": 1,
            "date": 0,
            "chat": {"id": -4_100_000_077, "type": "supergroup"},
            "text": text,
        },
    }


async def _post(url: str, body: bytes, headers: dict[str, str]) -> int | None:
    """The HTTP status, or None when the server closed the connection instead of answering."""
    async with httpx.AsyncClient(timeout=30) as client:
        try:
            reply = await client.post(url, content=body, headers=headers)
        except httpx.TransportError:
            return None
    return reply.status_code


async def test_the_endpoint_refuses_before_anything_reaches_the_application(
    standin: BotApiStandIn, db_path: Path
) -> None:
    port = _free_port()
    hook = Webhook("127.0.0.1", port, f"http://127.0.0.1:{port}/telegram", SECRET)
    app = app_for(standin, db_path)
    queued: list[object] = []
    async with running(app, webhook=hook):
        # Telegram was told where to post and which secret to send back (setWebhook)
        call = next(c for c in standin.calls if c.method == "setWebhook")
        assert call.params["url"] == hook.url and call.params["secret_token"] == SECRET
        # PTB's own webhook server (plain != on the secret, 100 MB bodies) is not running
        assert app.updater is not None and not app.updater.running
        json_headers = {"Content-Type": "application/json"}
        good = {**json_headers, SECRET_HEADER: SECRET}
        original_put = app.update_queue.put

        async def spy(item: object) -> None:
            queued.append(item)
            await original_put(item)

        app.update_queue.put = spy  # type: ignore[method-assign]
        small = json.dumps(_update("/help")).encode()
        # over the cap (padding inside a valid update, so only the size is wrong)
        big = json.dumps(_update("x" * (MAX_BODY_BYTES + 10), 78)).encode()
        assert await _post(hook.url, small, {**json_headers, SECRET_HEADER: "wrong"}) == 403
        assert await _post(hook.url, small, json_headers) == 403
        assert await _post(hook.url, big, good) in (None, 400, 413)
        for junk in (b"{not json", b"null", b"[1, 2]", b'"text"'):
            assert await _post(hook.url, junk, good) == 400, junk
        assert (
            await _post(hook.url, small, {SECRET_HEADER: SECRET, "Content-Type": "text/plain"})
            == 415
        )
        assert queued == []
        # the real thing passes, and a header name in other letter case is the same header
        assert await _post(hook.url, small, {**json_headers, SECRET_HEADER.lower(): SECRET}) == 200
        assert len(queued) == 1
