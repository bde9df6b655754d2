"""What a formatted text looks like once Telegram has parsed its markup.

Length limits marked "after entities parsing" count the visible text, not the HTML or Markdown
source, so the validator and the stored chat log both need the visible text.
"""

from __future__ import annotations

import html
import re

_HTML_TAG = re.compile(r"<[^>]*>")
_MARKDOWN_LINK = re.compile(r"\[([^\]]*)\]\([^)]*\)")
_MARKDOWN_V2_MARKS = re.compile(r"(?<!\\)(\|\||[*_~`])")
_MARKDOWN_V2_ESCAPE = re.compile(r"\\(.)", re.DOTALL)
_MARKDOWN_MARKS = re.compile(r"[*_`]")


def visible_text(text: str, parse_mode: str | None) -> str:
    """The text a reader sees. HTML is exact; Markdown is a close approximation."""
    mode = (parse_mode or "").lower()
    if mode == "html":
        return html.unescape(_HTML_TAG.sub("", text))
    if mode == "markdownv2":
        without_links = _MARKDOWN_LINK.sub(r"\1", text)
        return _MARKDOWN_V2_ESCAPE.sub(r"\1", _MARKDOWN_V2_MARKS.sub("", without_links))
    if mode == "markdown":
        return _MARKDOWN_MARKS.sub("", _MARKDOWN_LINK.sub(r"\1", text))
    return text


def utf16_length(text: str) -> int:
    """Length in UTF-16 code units, the unit of Telegram's entity offsets and lengths."""
    return len(text.encode("utf-16-le")) // 2
