"""User text made safe to show: no markup, no terminal control characters.

Item names, ids, groups and file names come from files anyone can write. A
name such as ``[b]x[/b]`` must not turn bold and ``\\x1b[2J`` must not clear
the screen, so every such string passes through `clean` (control characters
become visible symbols) and reaches the screen as `Content`/`Text` objects or
raw segments, never as markup.
"""

from __future__ import annotations

import re

from rich.text import Text

# C0 controls, DEL, C1 controls, and the bidirectional overrides/isolates that
# can make text display in a different order than it is stored.
_CONTROL = re.compile("[\x00-\x1f\x7f-\x9f\u202a-\u202e\u2066-\u2069]")


def _visible(match: re.Match) -> str:
    ch = match.group(0)
    code = ord(ch)
    if code < 0x20:
        return chr(0x2400 + code)  # the Unicode "control pictures" block: ␛ for ESC
    if code == 0x7F:
        return "\u2421"  # ␡
    return "\ufffd"


def clean(text: object) -> str:
    """`text` as a string with every control character replaced by a visible symbol."""
    s = text if isinstance(text, str) else str(text)
    return _CONTROL.sub(_visible, s) if _CONTROL.search(s) else s


def literal(text: object, style: str = "") -> Text:
    """A rich Text that shows `text` exactly (cleaned), never parsed as markup."""
    return Text(clean(text), style=style, no_wrap=False)
