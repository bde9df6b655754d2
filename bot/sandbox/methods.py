"""The Bot API methods the stand-in implements, acting on the simulated world.

Each method receives parameters that already passed the spec validator and answers with a
spec-shaped result or raises ApiError with Telegram's own wording for the failure.
"""

from __future__ import annotations

import hashlib
import json
import mimetypes
import time
from collections.abc import Awaitable, Callable
from dataclasses import dataclass
from typing import Any

from bot.sandbox.errors import (
    BLOCKED_BY_USER,
    CANT_INITIATE,
    CHAT_NOT_FOUND,
    NOT_MODIFIED,
    QUERY_TOO_OLD,
    bad_request,
    conflict,
    forbidden,
    group_migrated,
)
from bot.sandbox.models import SimChat, SimMessage, StoredFile
from bot.sandbox.wire import UploadedFile
from bot.sandbox.world import World

Params = dict[str, Any]
Handler = Callable[[Params], Awaitable[Any]]
DEFAULT_LIMIT = 100


@dataclass
class WebhookSettings:
    """What setWebhook stored; :mod:`bot.sandbox.webhook` delivers from the update queue."""

    url: str = ""
    secret_token: str | None = None
    max_connections: int = 40
    allowed_updates: list[str] | None = None
    has_custom_certificate: bool = False


def _scope_key(params: Params) -> tuple[str, str]:
    scope = params.get("scope") or {"type": "default"}
    return (json.dumps(scope, sort_keys=True), params.get("language_code", ""))


class BotApiMethods:
    """Method name -> coroutine; unknown names are left to the server (404, like Telegram)."""

    def __init__(self, world: World) -> None:
        self.world = world
        self.webhook = WebhookSettings()
        self.handlers: dict[str, Handler] = {
            "getMe": self.get_me,
            "logOut": self.log_out,
            "close": self.log_out,
            "getUpdates": self.get_updates,
            "setWebhook": self.set_webhook,
            "deleteWebhook": self.delete_webhook,
            "getWebhookInfo": self.get_webhook_info,
            "sendMessage": self.send_message,
            "editMessageText": self.edit_message_text,
            "editMessageReplyMarkup": self.edit_message_reply_markup,
            "deleteMessage": self.delete_message,
            "answerCallbackQuery": self.answer_callback_query,
            "sendPhoto": self.send_photo,
            "sendDocument": self.send_document,
            "getFile": self.get_file,
            "setMyCommands": self.set_my_commands,
            "getMyCommands": self.get_my_commands,
            "deleteMyCommands": self.delete_my_commands,
            "getChat": self.get_chat,
            "getChatMember": self.get_chat_member,
            "getChatAdministrators": self.get_chat_administrators,
        }

    def handler_for(self, method_name: str) -> Handler | None:
        """The implementation, matching names case-insensitively as Telegram does."""
        lowered = method_name.lower()
        return next((h for name, h in self.handlers.items() if name.lower() == lowered), None)

    # --- lookups ----------------------------------------------------------------------------

    def _chat(self, chat_id: Any) -> SimChat:
        chat = self.world.chats.get(chat_id) if isinstance(chat_id, int) else None
        if chat is None and isinstance(chat_id, int) and chat_id in self.world.users:
            chat = self.world.private_chat_of(self.world.users[chat_id])
        if chat is None:
            raise bad_request(CHAT_NOT_FOUND)
        if chat.migrated_to is not None:
            raise group_migrated(chat.migrated_to)
        return chat

    def _writable_chat(self, chat_id: Any) -> SimChat:
        chat = self._chat(chat_id)
        user = chat.private_with
        if user is not None and user.blocked_bot:
            raise forbidden(BLOCKED_BY_USER)
        if user is not None and not user.opened_private_chat:
            raise forbidden(CANT_INITIATE)
        if chat.type != "private" and not chat.bot_is_member:
            raise forbidden(f"bot is not a member of the {chat.type} chat")
        return chat

    def _message(self, params: Params, missing: str) -> SimMessage:
        if "inline_message_id" in params:
            raise bad_request("the sandbox does not simulate inline messages; use chat_id")
        message = self.world.find_message(self._chat(params["chat_id"]), params["message_id"])
        if message is None:
            raise bad_request(missing)
        return message

    def _reply_target(self, chat: SimChat, params: Params) -> SimMessage | None:
        reply = params.get("reply_parameters")
        if not reply:
            return None
        target = self.world.find_message(chat, reply.get("message_id", 0))
        if target is None and not reply.get("allow_sending_without_reply"):
            raise bad_request("message to be replied not found")
        return target

    # --- identity and updates ---------------------------------------------------------------

    async def get_me(self, params: Params) -> Any:
        """The bot's User with the getMe-only capability flags."""
        return {
            **self.world.bot.to_api(),
            "can_join_groups": True,
            "can_read_all_group_messages": not self.world.privacy_mode,
            "supports_inline_queries": False,
        }

    async def log_out(self, params: Params) -> Any:
        """Accepted and ignored: there is no cloud server to log out from."""
        return True

    async def get_updates(self, params: Params) -> Any:
        """Long polling; refused with 409 while a webhook is set, as Telegram does."""
        if self.webhook.url:
            raise conflict(
                "can't use getUpdates method while webhook is active; "
                "use deleteWebhook to delete the webhook first"
            )
        return await self.world.updates.poll(
            offset=params.get("offset", 0),
            limit=params.get("limit", DEFAULT_LIMIT),
            timeout=params.get("timeout", 0),
            allowed=params.get("allowed_updates"),
        )

    async def set_webhook(self, params: Params) -> Any:
        """Store the webhook; the stand-in's WebhookDelivery starts POSTing updates to it."""
        if params.get("drop_pending_updates"):
            self.world.updates.drop_all()
        if params.get("allowed_updates") is not None:
            self.world.updates.allowed_updates = params["allowed_updates"]
        self.webhook = WebhookSettings(
            url=params["url"],
            secret_token=params.get("secret_token"),
            max_connections=params.get("max_connections", 40),
            allowed_updates=params.get("allowed_updates"),
            has_custom_certificate="certificate" in params,
        )
        return True

    async def delete_webhook(self, params: Params) -> Any:
        """Forget the webhook so getUpdates works again."""
        if params.get("drop_pending_updates"):
            self.world.updates.drop_all()
        self.webhook = WebhookSettings()
        return True

    async def get_webhook_info(self, params: Params) -> Any:
        """The WebhookInfo object."""
        info: dict[str, Any] = {
            "url": self.webhook.url,
            "has_custom_certificate": self.webhook.has_custom_certificate,
            "pending_update_count": len(self.world.updates.pending),
        }
        if self.webhook.url:
            info["max_connections"] = self.webhook.max_connections
            if self.webhook.allowed_updates is not None:
                info["allowed_updates"] = self.webhook.allowed_updates
        return info

    # --- messages ---------------------------------------------------------------------------

    async def send_message(self, params: Params) -> Any:
        """Post text (with an optional keyboard) into a chat the bot may write to."""
        chat = self._writable_chat(params["chat_id"])
        message = self.world.record_message(
            chat,
            self.world.bot,
            raw_text=params["text"],
            parse_mode=params.get("parse_mode"),
            entities=params.get("entities"),
            reply_markup=params.get("reply_markup"),
            reply_to=self._reply_target(chat, params),
        )
        return message.to_api()

    async def edit_message_text(self, params: Params) -> Any:
        """Replace text; a missing reply_markup removes the keyboard, as in Telegram."""
        message = self._editable(params)
        if message.raw_text is None:
            raise bad_request("there is no text in the message to edit")
        new_markup = params.get("reply_markup")
        same_text = (message.raw_text, message.parse_mode) == (
            params.get("text"),
            params.get("parse_mode"),
        )
        if same_text and new_markup == message.reply_markup:
            raise bad_request(NOT_MODIFIED)
        message.raw_text = params.get("text")
        message.parse_mode = params.get("parse_mode")
        message.entities = params.get("entities")
        return self._edited(message, new_markup)

    async def edit_message_reply_markup(self, params: Params) -> Any:
        """Replace (or with no reply_markup, remove) the inline keyboard."""
        message = self._editable(params)
        new_markup = params.get("reply_markup")
        if new_markup == message.reply_markup:
            raise bad_request(NOT_MODIFIED)
        return self._edited(message, new_markup)

    def _editable(self, params: Params) -> SimMessage:
        message = self._message(params, "message to edit not found")
        if not message.from_bot:
            raise bad_request("message can't be edited")
        return message

    def _edited(self, message: SimMessage, new_markup: dict[str, Any] | None) -> Any:
        message.reply_markup = new_markup
        message.edit_date = self.world.clock()
        self.world.changed.notify()
        return message.to_api()

    async def delete_message(self, params: Params) -> Any:
        """Delete the bot's own messages anywhere; others' only where the bot is an admin."""
        message = self._message(params, "message to delete not found")
        chat = message.chat
        allowed = message.from_bot or chat.type == "private" or self.world.bot.id in chat.admin_ids
        if not allowed:
            raise bad_request("message can't be deleted")
        message.deleted = True
        self.world.changed.notify()
        return True

    async def answer_callback_query(self, params: Params) -> Any:
        """Each query can be answered once; unknown or repeated ids get Telegram's 400."""
        record = self.world.callbacks.get(params["callback_query_id"])
        if record is None or record.answered:
            raise bad_request(QUERY_TOO_OLD)
        record.answered = True
        record.answered_at = time.perf_counter()
        record.answer_text = params.get("text")
        record.show_alert = bool(params.get("show_alert", False))
        self.world.changed.notify()
        return True

    # --- files ------------------------------------------------------------------------------

    def _stored_file(self, value: Any, default_name: str) -> StoredFile:
        if isinstance(value, UploadedFile):
            digest = hashlib.sha256(value.content).hexdigest()[:16]
            filename = value.filename or default_name
            mime = value.content_type
            if not mime or mime == "application/octet-stream":
                mime = mimetypes.guess_type(filename)[0] or "application/octet-stream"
            stored = StoredFile(f"sandbox-{digest}", digest, filename, value.content, mime)
            self.world.files[stored.file_id] = stored
            return stored
        if isinstance(value, str) and value in self.world.files:
            return self.world.files[value]
        if isinstance(value, str) and value.startswith(("http://", "https://")):
            raise bad_request("failed to get HTTP URL content")
        raise bad_request("wrong file identifier/HTTP URL specified")

    async def send_photo(self, params: Params) -> Any:
        """Store the uploaded image and post it with its caption."""
        return self._send_file(params, "photo", "photo.png")

    async def send_document(self, params: Params) -> Any:
        """Store the uploaded document (bytes and filename) and post it with its caption."""
        return self._send_file(params, "document", "document")

    def _send_file(self, params: Params, kind: str, default_name: str) -> Any:
        chat = self._writable_chat(params["chat_id"])
        stored = self._stored_file(params[kind], default_name)
        message = self.world.record_message(
            chat,
            self.world.bot,
            raw_caption=params.get("caption"),
            parse_mode=params.get("parse_mode"),
            reply_markup=params.get("reply_markup"),
            reply_to=self._reply_target(chat, params),
            **{kind: stored},
        )
        return message.to_api()

    async def get_file(self, params: Params) -> Any:
        """The File object, downloadable under base_file_url."""
        stored = self.world.files.get(params["file_id"])
        if stored is None:
            raise bad_request("invalid file_id")
        return stored.as_file()

    # --- commands ---------------------------------------------------------------------------

    async def set_my_commands(self, params: Params) -> Any:
        """Store the command list per scope and language."""
        self.world.commands[_scope_key(params)] = params["commands"]
        return True

    async def get_my_commands(self, params: Params) -> Any:
        """The commands for exactly this scope and language (empty if none were set)."""
        return self.world.commands.get(_scope_key(params), [])

    async def delete_my_commands(self, params: Params) -> Any:
        """Forget the commands of this scope and language."""
        self.world.commands.pop(_scope_key(params), None)
        return True

    # --- chats ------------------------------------------------------------------------------

    async def get_chat(self, params: Params) -> Any:
        """The ChatFullInfo object."""
        return self._chat(params["chat_id"]).full_info()

    async def get_chat_member(self, params: Params) -> Any:
        """A ChatMember subtype chosen by the user's role in the chat."""
        chat = self._chat(params["chat_id"])
        user = self.world.users.get(params["user_id"])
        if user is None:
            raise bad_request("user not found")
        return self._member(chat, user.id)

    async def get_chat_administrators(self, params: Params) -> Any:
        """Owner first, then administrators; private chats have none (Telegram's 400)."""
        chat = self._chat(params["chat_id"])
        if chat.type == "private":
            raise bad_request("there are no administrators in the private chat")
        ids = ([chat.owner_id] if chat.owner_id is not None else []) + chat.admin_ids
        return [self._member(chat, user_id) for user_id in ids]

    def _member(self, chat: SimChat, user_id: int) -> dict[str, Any]:
        user = self.world.users[user_id].to_api()
        in_chat = (
            user_id in chat.member_ids
            or (user_id == self.world.bot.id and chat.bot_is_member)
            or (chat.private_with is not None and chat.private_with.id == user_id)
        )
        if user_id == chat.owner_id:
            return {"status": "creator", "user": user, "is_anonymous": False}
        if user_id in chat.admin_ids:
            return _administrator(user, user_id == self.world.bot.id)
        if in_chat:
            return {"status": "member", "user": user}
        return {"status": "left", "user": user}


def _administrator(user: dict[str, Any], is_the_bot: bool) -> dict[str, Any]:
    """ChatMemberAdministrator with every right the spec marks as required."""
    rights = (
        "can_manage_chat",
        "can_delete_messages",
        "can_manage_video_chats",
        "can_restrict_members",
        "can_promote_members",
        "can_change_info",
        "can_invite_users",
        "can_post_stories",
        "can_edit_stories",
        "can_delete_stories",
        "can_pin_messages",
    )
    member: dict[str, Any] = {
        "status": "administrator",
        "user": user,
        "can_be_edited": is_the_bot,
        "is_anonymous": False,
    }
    member.update(dict.fromkeys(rights, True))
    return member
