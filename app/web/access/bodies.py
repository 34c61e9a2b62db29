"""Checks on the JSON a request carries that FastAPI's parser lets through: text that is not
Unicode (lone surrogate escapes such as \\ud800). No routes here.
"""

from __future__ import annotations

from typing import Any

from rankscope.tables.errors import InputError


def sound_text(body: Any, where: str = "request body") -> Any:
    """The body as given; InputError when a string in it (key or value) is not Unicode text,
    which could neither be stored nor shown. Walks without recursion: bodies may nest deeply."""
    stack = [body]
    while stack:
        value = stack.pop()
        if isinstance(value, str):
            try:
                value.encode("utf-8")
            except UnicodeEncodeError:
                raise InputError("a text in it holds a lone surrogate escape (\\ud800 to "
                                 "\\udfff), which is not a character", where,
                                 "Send text that is valid Unicode") from None
        elif isinstance(value, dict):
            stack.extend(value.keys())
            stack.extend(value.values())
        elif isinstance(value, list):
            stack.extend(value)
    return body


def safe_text(text: str) -> str:
    """A message that can always be sent as UTF-8 (it may quote what the user sent)."""
    return text.encode("utf-8", "backslashreplace").decode("utf-8")
