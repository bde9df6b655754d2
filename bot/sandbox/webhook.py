"""Webhook delivery for the stand-in: queued updates POSTed to the URL setWebhook stored.

As the Bot API spec describes setWebhook: each update goes as a JSON-serialised ``Update`` in
an HTTP POST, with the header ``X-Telegram-Bot-Api-Secret-Token`` when a secret was set, and a
request answered with anything but 2XX is repeated (Telegram "will give up after a reasonable
amount of attempts"; here ``max_attempts``, after which the update is dropped and recorded).

Updates go one at a time, in order: a later update waits until the earlier one is accepted
or given up. The test-only knob :meth:`WebhookDelivery.alternate_with` adds more URLs so
deliveries rotate between them, like two bot processes behind one load balancer; a retry
goes to the next URL in the rotation, as a balancer would send it.
"""

from __future__ import annotations

import asyncio
import contextlib
import json
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from tornado.httpclient import AsyncHTTPClient, HTTPClientError, HTTPRequest

from bot.sandbox.updates import Notifier, UpdateQueue

#: The header Telegram sends with each webhook request when ``setWebhook`` was given a
#: ``secret_token`` (Bot API spec, setWebhook). Spelled here, not imported from the bot: the
#: stand-in plays Telegram and must not share code with what it checks.
SECRET_HEADER = "X-Telegram-Bot-Api-Secret-Token"

REQUEST_TIMEOUT = 10.0


@dataclass(frozen=True, slots=True)
class Target:
    """Where updates go now: the URL setWebhook stored and its secret token, if any."""

    url: str
    secret_token: str | None


@dataclass(frozen=True, slots=True)
class Attempt:
    """One POST: which update, to which URL, and the HTTP status (0: no answer at all)."""

    update_id: int
    url: str
    status: int


class WebhookDelivery:
    """Runs while the stand-in runs; idle whenever no webhook is set."""

    def __init__(
        self,
        updates: UpdateQueue,
        target: Callable[[], Target | None],
        changed: Notifier,
        *,
        retry_delay: float = 0.05,
        max_attempts: int = 20,
    ) -> None:
        self._updates = updates
        self._target = target
        self._changed = changed
        self.retry_delay = retry_delay
        self.max_attempts = max_attempts
        self.attempts: list[Attempt] = []
        self.given_up: list[dict[str, Any]] = []
        self._extra_urls: list[str] = []
        self._turn = 0
        self._task: asyncio.Task[None] | None = None

    def alternate_with(self, *urls: str) -> None:
        """Test-only: rotate deliveries between the webhook URL and these URLs."""
        self._extra_urls = list(urls)

    def delivered(self, url: str | None = None) -> list[int]:
        """Update ids accepted (2XX), optionally only those accepted at ``url``."""
        return [
            a.update_id
            for a in self.attempts
            if 200 <= a.status < 300 and (url is None or a.url == url)
        ]

    def start(self) -> None:
        if self._task is None:
            self._task = asyncio.get_running_loop().create_task(self._run())

    async def stop(self) -> None:
        if self._task is not None:
            self._task.cancel()
            with contextlib.suppress(asyncio.CancelledError):
                await self._task
            self._task = None

    async def _run(self) -> None:
        failures = 0
        while True:
            target = self._target()
            waiting = self._updates.take(0, 1) if target is not None else []
            if target is None or not waiting:
                failures = 0
                await self._changed.wait(1.0)
                continue
            update = waiting[0]
            if await self._post(target, update):
                self._updates.remove(update["update_id"])
                failures = 0
                continue
            failures += 1
            if failures >= self.max_attempts:
                self._updates.remove(update["update_id"])
                self.given_up.append(update)
                failures = 0
            await asyncio.sleep(self.retry_delay)

    def _next_url(self, target: Target) -> str:
        urls = [target.url, *self._extra_urls]
        url = urls[self._turn % len(urls)]
        self._turn += 1
        return url

    async def _post(self, target: Target, update: dict[str, Any]) -> bool:
        url = self._next_url(target)
        headers = {"Content-Type": "application/json"}
        if target.secret_token:
            headers[SECRET_HEADER] = target.secret_token
        request = HTTPRequest(
            url,
            method="POST",
            headers=headers,
            body=json.dumps(update),
            request_timeout=REQUEST_TIMEOUT,
        )
        try:
            response = await AsyncHTTPClient().fetch(request, raise_error=False)
            status = response.code
        except (HTTPClientError, OSError):
            status = 0
        self.attempts.append(Attempt(update["update_id"], url, status))
        self._changed.notify()  # tests waiting on the world see the attempt
        return 200 <= status < 300
