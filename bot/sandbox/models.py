"""The simulated people, chats, messages and files, each able to show itself as Bot API JSON.

Keeping the Telegram-shaped rendering next to the data means every response the stand-in sends
is built in one place, and a test validates those shapes against the spec.
"""

from __future__ import annotations

import struct
from dataclasses import dataclass, field
from typing import Any, Literal

from bot.sandbox.markup import visible_text

ChatType = Literal["private", "group", "supergroup"]
_PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


@dataclass
class SimUser:
    """A person (or the bot itself) with the identity fields Telegram shows to bots."""

    id: int
    first_name: str
    username: str | None = None
    last_name: str | None = None
    language_code: str | None = None
    is_bot: bool = False
    opened_private_chat: bool = False
    blocked_bot: bool = False

    def to_api(self) -> dict[str, Any]:
        """The User object."""
        shown: dict[str, Any] = {
            "id": self.id,
            "is_bot": self.is_bot,
            "first_name": self.first_name,
        }
        optional = {
            "last_name": self.last_name,
            "username": self.username,
            "language_code": self.language_code,
        }
        shown.update({key: value for key, value in optional.items() if value is not None})
        return shown


@dataclass
class SimChat:
    """A private chat, group or supergroup, with members and who runs it."""

    id: int
    type: ChatType
    title: str | None = None
    private_with: SimUser | None = None
    member_ids: list[int] = field(default_factory=list)
    admin_ids: list[int] = field(default_factory=list)
    owner_id: int | None = None
    bot_is_member: bool = True
    migrated_to: int | None = None
    next_message_id: int = 1

    def to_api(self) -> dict[str, Any]:
        """The Chat object."""
        shown: dict[str, Any] = {"id": self.id, "type": self.type}
        if self.private_with is not None:
            shown["first_name"] = self.private_with.first_name
            if self.private_with.username:
                shown["username"] = self.private_with.username
        if self.title is not None:
            shown["title"] = self.title
        return shown

    def full_info(self) -> dict[str, Any]:
        """The ChatFullInfo object: Chat plus the fields the spec marks as always present."""
        return {
            **self.to_api(),
            "accent_color_id": 0,
            "max_reaction_count": 11,
            "accepted_gift_types": {
                "unlimited_gifts": False,
                "limited_gifts": False,
                "unique_gifts": False,
                "premium_subscription": False,
                "gifts_from_channels": False,
            },
        }

    def take_message_id(self) -> int:
        """Message ids count up per chat, as they do in Telegram groups and private chats."""
        message_id = self.next_message_id
        self.next_message_id += 1
        return message_id


@dataclass(frozen=True)
class StoredFile:
    """An uploaded file, kept so tests can read exactly what the bot sent."""

    file_id: str
    file_unique_id: str
    filename: str
    content: bytes
    mime_type: str

    @property
    def file_path(self) -> str:
        """Where the file is served under base_file_url."""
        return f"documents/{self.file_unique_id}/{self.filename}"

    def as_document(self) -> dict[str, Any]:
        """The Document object."""
        return {
            "file_id": self.file_id,
            "file_unique_id": self.file_unique_id,
            "file_name": self.filename,
            "mime_type": self.mime_type,
            "file_size": len(self.content),
        }

    def as_photo(self) -> list[dict[str, Any]]:
        """The PhotoSize array; PNG dimensions are read from the header, other formats are 0x0."""
        width, height = png_size(self.content)
        return [
            {
                "file_id": self.file_id,
                "file_unique_id": self.file_unique_id,
                "width": width,
                "height": height,
                "file_size": len(self.content),
            }
        ]

    def as_file(self) -> dict[str, Any]:
        """The File object returned by getFile."""
        return {
            "file_id": self.file_id,
            "file_unique_id": self.file_unique_id,
            "file_size": len(self.content),
            "file_path": self.file_path,
        }


def png_size(content: bytes) -> tuple[int, int]:
    """Width and height from a PNG IHDR chunk, or (0, 0) when the bytes are not a PNG."""
    if len(content) < 24 or not content.startswith(_PNG_SIGNATURE):
        return (0, 0)
    width, height = struct.unpack(">II", content[16:24])
    return (int(width), int(height))


@dataclass(frozen=True)
class Button:
    """One inline button as a person sees it."""

    text: str
    callback_data: str | None
    url: str | None


@dataclass
class SimMessage:
    """A message in a chat; text is stored as sent and shown as Telegram would display it."""

    chat: SimChat
    message_id: int
    date: int
    sender: SimUser
    raw_text: str | None = None
    parse_mode: str | None = None
    entities: list[dict[str, Any]] | None = None
    raw_caption: str | None = None
    reply_markup: dict[str, Any] | None = None
    document: StoredFile | None = None
    photo: StoredFile | None = None
    reply_to: SimMessage | None = None
    edit_date: int | None = None
    deleted: bool = False
    delivered: bool = True
    service: dict[str, Any] = field(default_factory=dict)

    @property
    def text(self) -> str | None:
        """The text a reader sees (markup removed)."""
        return None if self.raw_text is None else visible_text(self.raw_text, self.parse_mode)

    @property
    def caption(self) -> str | None:
        """The caption a reader sees (markup removed)."""
        return None if self.raw_caption is None else visible_text(self.raw_caption, self.parse_mode)

    @property
    def from_bot(self) -> bool:
        """Whether the bot sent this message (only those can be edited by the bot)."""
        return self.sender.is_bot

    def buttons(self) -> list[list[Button]]:
        """The current inline keyboard, row by row; empty when there is none."""
        rows = (self.reply_markup or {}).get("inline_keyboard", [])
        return [
            [Button(b.get("text", ""), b.get("callback_data"), b.get("url")) for b in row]
            for row in rows
        ]

    def to_api(self, *, with_reply: bool = True) -> dict[str, Any]:
        """The Message object."""
        shown: dict[str, Any] = {
            "message_id": self.message_id,
            "date": self.date,
            "chat": self.chat.to_api(),
            "from": self.sender.to_api(),
        }
        optional: dict[str, Any] = {
            "text": self.text,
            "entities": self.entities,
            "caption": self.caption,
            # Message.reply_markup is an InlineKeyboardMarkup only (Bot API, Message); a
            # ForceReply or reply keyboard the bot sent is not echoed back.
            "reply_markup": self.reply_markup
            if self.reply_markup and "inline_keyboard" in self.reply_markup
            else None,
            "edit_date": self.edit_date,
            "document": self.document.as_document() if self.document else None,
            "photo": self.photo.as_photo() if self.photo else None,
        }
        if with_reply and self.reply_to is not None:
            optional["reply_to_message"] = self.reply_to.to_api(with_reply=False)
        shown.update({key: value for key, value in optional.items() if value is not None})
        shown.update(self.service)
        return shown
