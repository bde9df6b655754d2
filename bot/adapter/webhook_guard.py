"""Is this webhook request from Telegram? The secret-token check, for any HTTP framework.

``setWebhook`` takes a ``secret_token`` and Telegram then sends it in the header
``X-Telegram-Bot-Api-Secret-Token`` of every webhook request (Bot API spec, setWebhook). Anyone
who learns the webhook URL can POST to it; only Telegram knows the token. A request without
the right header must be refused before its body is even parsed, so a forged update can never
reach the engine.
"""

from __future__ import annotations

import hmac
import re
from collections.abc import Mapping
from dataclasses import dataclass

SECRET_HEADER = "X-Telegram-Bot-Api-Secret-Token"
# Bot API spec, setWebhook.secret_token: "1-256 characters. Only characters A-Z, a-z, 0-9, _
# and - are allowed."
_SECRET_SHAPE = re.compile(r"[A-Za-z0-9_-]{1,256}")
REFUSED_STATUS = 403  # common practice (PTB's own webhook handler answers 403 as well)


@dataclass(frozen=True, slots=True)
class Verdict:
    """``ok`` or not, the HTTP status to answer with, and a reason for the log (never sent)."""

    ok: bool
    status: int
    reason: str


def check_secret_token(secret: str) -> str:
    """Return ``secret`` if Telegram would accept it, else say how to fix it."""
    if not _SECRET_SHAPE.fullmatch(secret):
        raise ValueError(
            "FLATPACT_WEBHOOK_SECRET must be 1-256 characters of A-Z, a-z, 0-9, _ and - "
            "(Telegram's rule); generate one with: python -c 'import secrets; "
            "print(secrets.token_urlsafe(48))'"
        )
    return secret


def verify(headers: Mapping[str, str], expected_secret: str) -> Verdict:
    """Check the secret-token header; the comparison takes the same time for any wrong token."""
    received = _header(headers, SECRET_HEADER)
    if received is None:
        return Verdict(False, REFUSED_STATUS, f"no {SECRET_HEADER} header")
    if not hmac.compare_digest(received.encode(), expected_secret.encode()):
        return Verdict(False, REFUSED_STATUS, f"wrong {SECRET_HEADER} header")
    return Verdict(True, 200, "secret token matches")


def _header(headers: Mapping[str, str], name: str) -> str | None:
    """Header lookup that ignores case (HTTP header names are case-insensitive, RFC 9110)."""
    direct = headers.get(name)
    if direct is not None:
        return direct
    wanted = name.lower()
    return next((value for key, value in headers.items() if key.lower() == wanted), None)
