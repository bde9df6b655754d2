"""The simulated Telegram world a test drives: people, chats, what they say and press.

Tests act as the flatmates (say something, press a button, open a private chat); the bot acts
through the Bot API. Everything both sides did is kept as a chat log the test can read.
"""

from __future__ import annotations

import asyncio
import re
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any, TypeVar

from bot.sandbox.errors import SandboxError
from bot.sandbox.markup import utf16_length
from bot.sandbox.models import Button, SimChat, SimMessage, SimUser, StoredFile
from bot.sandbox.updates import Notifier, UpdateQueue

FIRST_USER_ID = 7_000_001
FIRST_GROUP_ID = -4_100_000_001
FIRST_SUPERGROUP_ID = -1_002_100_000_001
FIRST_CALLBACK_ID = 5_200_000_000_000_001
_COMMAND = re.compile(r"(?<!\S)/[A-Za-z0-9_]{1,32}(?:@[A-Za-z0-9_]{3,32})?")
Found = TypeVar("Found")


@dataclass
class CallbackRecord:
    """A button press the bot must answer, and the answer it gave."""

    query_id: str
    user: SimUser
    message: SimMessage
    data: str
    answered: bool = False
    answer_text: str | None = None
    show_alert: bool = False
    #: ``time.perf_counter()`` when the press was queued and when it was answered (benchmarks)
    pressed_at: float = field(default_factory=time.perf_counter)
    answered_at: float | None = None


def command_entities(text: str) -> list[dict[str, Any]]:
    """bot_command entities for every /command in text, offsets in UTF-16 units as Telegram."""
    return [
        {
            "type": "bot_command",
            "offset": utf16_length(text[: match.start()]),
            "length": utf16_length(match.group()),
        }
        for match in _COMMAND.finditer(text)
    ]


class World:
    """Users, chats, messages, files and the update queue, shared by the server and the test."""

    def __init__(self, bot_user: SimUser, clock: Callable[[], int] | None = None) -> None:
        self.bot = bot_user
        self.clock = clock or (lambda: int(time.time()))
        self.privacy_mode = True
        self.changed = Notifier()
        self.updates = UpdateQueue(self.changed)
        self.users: dict[int, SimUser] = {bot_user.id: bot_user}
        self.chats: dict[int, SimChat] = {}
        self.messages: list[SimMessage] = []
        self.files: dict[str, StoredFile] = {}
        self.callbacks: dict[str, CallbackRecord] = {}
        self.commands: dict[tuple[str, str], list[dict[str, Any]]] = {}
        self._next_user_id = FIRST_USER_ID
        self._next_group_id = FIRST_GROUP_ID
        self._next_supergroup_id = FIRST_SUPERGROUP_ID
        self._next_callback_id = FIRST_CALLBACK_ID

    # --- people and chats -------------------------------------------------------------------

    def add_user(
        self, first_name: str, username: str | None = None, language_code: str | None = None
    ) -> SimUser:
        """A new person; ids are handed out in order so tests stay deterministic."""
        user = SimUser(self._next_user_id, first_name, username, language_code=language_code)
        self._next_user_id += 1
        self.users[user.id] = user
        return user

    def add_group(
        self,
        title: str,
        members: list[SimUser],
        *,
        owner: SimUser | None = None,
        admins: tuple[SimUser, ...] = (),
        supergroup: bool = False,
    ) -> SimChat:
        """A group (or supergroup) with the bot in it; the owner defaults to the first member."""
        if not members:
            raise SandboxError("A group needs at least one member: pass members=[...]")
        chat_owner = owner or members[0]
        chat_id = self._take_group_id(supergroup)
        chat = SimChat(
            id=chat_id,
            type="supergroup" if supergroup else "group",
            title=title,
            member_ids=[u.id for u in members],
            admin_ids=[a.id for a in admins if a.id != chat_owner.id],
            owner_id=chat_owner.id,
        )
        self.chats[chat.id] = chat
        return chat

    def _take_group_id(self, supergroup: bool) -> int:
        if supergroup:
            chat_id = self._next_supergroup_id
            self._next_supergroup_id -= 1
        else:
            chat_id = self._next_group_id
            self._next_group_id -= 1
        return chat_id

    def private_chat_of(self, user: SimUser) -> SimChat:
        """The user's private chat with the bot (its id is the user's id, as in Telegram)."""
        if user.id not in self.chats:
            self.chats[user.id] = SimChat(id=user.id, type="private", private_with=user)
        return self.chats[user.id]

    def make_admin(self, chat: SimChat, user: SimUser) -> None:
        """Promote a member (or the bot) to administrator."""
        if user.id not in chat.admin_ids and user.id != chat.owner_id:
            chat.admin_ids.append(user.id)

    def user_blocks_bot(self, user: SimUser) -> None:
        """From now on, sending to this user fails with 403 "bot was blocked by the user"."""
        user.blocked_bot = True

    def remove_bot_from(self, chat: SimChat) -> None:
        """The bot is kicked: sends to this group fail with 403."""
        chat.bot_is_member = False

    def upgrade_to_supergroup(self, group: SimChat) -> SimChat:
        """Telegram's migration: a new supergroup id, and the old id answers with a 400."""
        if group.type != "group":
            raise SandboxError(f"Only a basic group can be upgraded, not a {group.type}")
        supergroup = SimChat(
            id=self._take_group_id(supergroup=True),
            type="supergroup",
            title=group.title,
            member_ids=list(group.member_ids),
            admin_ids=list(group.admin_ids),
            owner_id=group.owner_id,
        )
        self.chats[supergroup.id] = supergroup
        owner = self.users[group.owner_id or group.member_ids[0]]
        self._service_message(group, owner, {"migrate_to_chat_id": supergroup.id})
        self._service_message(supergroup, owner, {"migrate_from_chat_id": group.id})
        group.migrated_to = supergroup.id
        return supergroup

    def _service_message(self, chat: SimChat, sender: SimUser, service: dict[str, Any]) -> None:
        message = self.record_message(chat, sender, service=service)
        self.updates.add("message", message.to_api())

    # --- people acting ----------------------------------------------------------------------

    def user_opens_private_chat(self, user: SimUser, payload: str | None = None) -> SimMessage:
        """The user taps Start (optionally through a t.me link with a start payload)."""
        text = "/start" if payload is None else f"/start {payload}"
        return self.user_says(user, self.private_chat_of(user), text)

    def deliver_again(self, message: SimMessage) -> None:
        """Telegram sends the update of this message once more (same update_id)."""
        for update_id, update in self.updates.history.items():
            sent = update.get("message")
            if sent and (sent["chat"]["id"], sent["message_id"]) == (
                message.chat.id,
                message.message_id,
            ):
                self.updates.add_again(update_id)
                return
        raise SandboxError(f"message {message.message_id} never reached the bot as an update")

    def user_says(self, user: SimUser, chat: SimChat, text: str) -> SimMessage:
        """The user sends text; the bot receives it if Telegram would deliver it (privacy mode)."""
        self._require_can_speak(user, chat)
        if chat.type == "private":
            user.opened_private_chat = True
            user.blocked_bot = False
        entities = command_entities(text)
        message = self.record_message(chat, user, raw_text=text, entities=entities or None)
        message.delivered = self._bot_receives(chat, text, entities)
        if message.delivered:
            self.updates.add("message", message.to_api())
        return message

    def user_replies(self, user: SimUser, to: SimMessage, text: str) -> SimMessage:
        """The user replies to a message; in privacy mode the bot still gets replies to its own
        messages (Telegram Bot API FAQ, "privacy mode"; from memory)."""
        chat = to.chat
        self._require_can_speak(user, chat)
        entities = command_entities(text)
        message = self.record_message(
            chat, user, raw_text=text, entities=entities or None, reply_to=to
        )
        message.delivered = to.from_bot or self._bot_receives(chat, text, entities)
        if message.delivered:
            self.updates.add("message", message.to_api())
        return message

    def _require_can_speak(self, user: SimUser, chat: SimChat) -> None:
        if chat.migrated_to is not None:
            raise SandboxError(
                f"{chat.title!r} became supergroup {chat.migrated_to}; speak in that chat instead"
            )
        if chat.type == "private" and chat.private_with is not user:
            raise SandboxError(f"{user.first_name} cannot write in someone else's private chat")
        if chat.type != "private" and user.id not in chat.member_ids:
            raise SandboxError(
                f"{user.first_name} is not a member of {chat.title!r}; add them to the group first"
            )

    def _bot_receives(self, chat: SimChat, text: str, entities: list[dict[str, Any]]) -> bool:
        """Telegram's privacy mode: in groups the bot sees commands and mentions only."""
        if chat.type == "private" or not self.privacy_mode or self.bot.id in chat.admin_ids:
            return True
        if not chat.bot_is_member:
            return False
        addressed_elsewhere = re.match(r"/\S+@(\w+)", text)
        if addressed_elsewhere:
            return addressed_elsewhere.group(1).lower() == (self.bot.username or "").lower()
        mentioned = f"@{self.bot.username}".lower() in text.lower()
        return bool(entities and entities[0]["offset"] == 0) or mentioned

    def user_presses(
        self, user: SimUser, message: SimMessage, callback_data: str, *, forge: bool = False
    ) -> CallbackRecord:
        """The user taps an inline button. Refuses buttons not on the current keyboard unless
        forge=True, which simulates a stale or tampered client for robustness tests."""
        if not forge:
            self._require_button(user, message, callback_data)
        query_id = str(self._next_callback_id)
        self._next_callback_id += 1
        record = CallbackRecord(query_id, user, message, callback_data)
        self.callbacks[query_id] = record
        self.updates.add(
            "callback_query",
            {
                "id": query_id,
                "from": user.to_api(),
                "message": message.to_api(),
                "chat_instance": str(abs(message.chat.id) * 7 + 3),
                "data": callback_data,
            },
        )
        return record

    def _require_button(self, user: SimUser, message: SimMessage, callback_data: str) -> None:
        if message.deleted:
            raise SandboxError("That message was deleted; nobody can press its buttons")
        chat = message.chat
        if chat.type != "private" and user.id not in chat.member_ids:
            raise SandboxError(f"{user.first_name} cannot see {chat.title!r}; add them first")
        offered = [b.callback_data for row in message.buttons() for b in row]
        if callback_data not in offered:
            raise SandboxError(
                f"Message {message.message_id} has no button with callback_data "
                f"{callback_data!r} (it offers {offered}); pass forge=True to send it anyway"
            )

    # --- the record -------------------------------------------------------------------------

    def record_message(self, chat: SimChat, sender: SimUser, **content: Any) -> SimMessage:
        """Store a new message with the chat's next id and the current time."""
        message = SimMessage(
            chat=chat, message_id=chat.take_message_id(), date=self.clock(), sender=sender
        )
        for name, value in content.items():
            setattr(message, name, value)
        self.messages.append(message)
        self.changed.notify()
        return message

    def messages_in(self, chat: SimChat) -> list[SimMessage]:
        """The chat's log in order, without deleted messages."""
        return [m for m in self.messages if m.chat is chat and not m.deleted]

    def last_message_to(self, chat: SimChat) -> SimMessage | None:
        """The newest message the bot sent to this chat that still exists."""
        from_bot = [m for m in self.messages_in(chat) if m.from_bot]
        return from_bot[-1] if from_bot else None

    def buttons_of(self, message: SimMessage) -> list[list[Button]]:
        """The message's current inline keyboard."""
        return message.buttons()

    def find_message(self, chat: SimChat, message_id: int) -> SimMessage | None:
        """A message that still exists in the chat."""
        return next((m for m in self.messages_in(chat) if m.message_id == message_id), None)

    async def wait_for(self, predicate: Callable[[], Found | None], timeout: float = 5.0) -> Found:
        """Wait until predicate returns something truthy (checked after every change)."""
        loop = asyncio.get_running_loop()
        deadline = loop.time() + timeout
        while True:
            found = predicate()
            if found:
                return found
            remaining = deadline - loop.time()
            if remaining <= 0:
                raise TimeoutError(
                    f"Nothing matched within {timeout}s; the last messages were: "
                    f"{[(m.chat.id, m.text) for m in self.messages[-5:]]}"
                )
            await self.changed.wait(remaining)
