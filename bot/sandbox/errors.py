"""Errors the stand-in answers with, worded exactly as Telegram words them.

The bot adapter reacts to these texts (PTB turns them into BadRequest, Forbidden, RetryAfter,
ChatMigrated), so keeping Telegram's wording here keeps the adapter honest.
"""

from __future__ import annotations

from typing import Any


class SandboxError(Exception):
    """A test drove the simulated world into something Telegram would never allow."""


class ApiError(Exception):
    """A Bot API error response: the HTTP status, Telegram's description and extra parameters."""

    def __init__(
        self, error_code: int, description: str, parameters: dict[str, Any] | None = None
    ) -> None:
        super().__init__(description)
        self.error_code = error_code
        self.description = description
        self.parameters = parameters

    def to_json(self) -> dict[str, Any]:
        """The body Telegram sends with this error."""
        body: dict[str, Any] = {
            "ok": False,
            "error_code": self.error_code,
            "description": self.description,
        }
        if self.parameters:
            body["parameters"] = self.parameters
        return body


def bad_request(reason: str) -> ApiError:
    """HTTP 400 with Telegram's "Bad Request: " prefix."""
    return ApiError(400, f"Bad Request: {reason}")


def forbidden(reason: str) -> ApiError:
    """HTTP 403 with Telegram's "Forbidden: " prefix."""
    return ApiError(403, f"Forbidden: {reason}")


def too_many_requests(retry_after: int) -> ApiError:
    """Flood control: Telegram's 429 with parameters.retry_after in seconds."""
    return ApiError(
        429, f"Too Many Requests: retry after {retry_after}", {"retry_after": retry_after}
    )


def group_migrated(new_chat_id: int) -> ApiError:
    """A call addressed to a group that became a supergroup; the bot must switch chat ids."""
    return ApiError(
        400,
        "Bad Request: group chat was upgraded to a supergroup chat",
        {"migrate_to_chat_id": new_chat_id},
    )


def conflict(reason: str) -> ApiError:
    """HTTP 409, e.g. two getUpdates loops or polling while a webhook is set."""
    return ApiError(409, f"Conflict: {reason}")


def injected(error_code: int, retry_after: int | None, description: str | None) -> ApiError:
    """An error a test asked for with fail_next; Telegram's wording unless the test gives one."""
    if error_code == 429:
        return too_many_requests(retry_after if retry_after is not None else 1)
    default_descriptions = {
        400: "Bad Request: injected by the sandbox",
        403: "Forbidden: injected by the sandbox",
        500: "Internal Server Error",
        502: "Bad Gateway",
    }
    text = description or default_descriptions.get(error_code, "Injected error")
    return ApiError(error_code, text)


def not_found() -> ApiError:
    """Telegram's answer to a method name it does not know."""
    return ApiError(404, "Not Found")


def unauthorized() -> ApiError:
    """Telegram's answer to a token it does not know."""
    return ApiError(401, "Unauthorized")


CHAT_NOT_FOUND = "chat not found"
CANT_INITIATE = "bot can't initiate conversation with a user"
BLOCKED_BY_USER = "bot was blocked by the user"
NOT_MODIFIED = (
    "message is not modified: specified new message content and reply markup are exactly "
    "the same as a current content and reply markup of the message"
)
QUERY_TOO_OLD = "query is too old and response timeout expired or query ID is invalid"
