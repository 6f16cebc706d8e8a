"""User text made safe to put in a file or on a terminal, without changing what it says."""

from __future__ import annotations

import unicodedata

_SPACES = "\t\n\r\v\f\x1c\x1d\x1e\x1f\x85"


def clean(text: object) -> str:
    """Control characters become '?' (tab, line break and the like a space), so no terminal
    sequence and no character XML forbids reaches a report or the screen; the rest is kept."""
    text = str(text)
    if text.isprintable():
        return text
    return "".join((" " if ch in _SPACES else "?") if unicodedata.category(ch) == "Cc" else ch for ch in text)
