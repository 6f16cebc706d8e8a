"""User text made safe to show: no markup, no terminal control characters.

Item names, ids, groups and file names come from files anyone can write. A
name such as ``[b]x[/b]`` must not turn bold and ``\\x1b[2J`` must not clear
the screen, so every such string passes through `clean` (control characters
become visible symbols) and reaches the screen as `Content`/`Text` objects or
raw segments, never as markup.
"""

from __future__ import annotations


from rich.text import Text

from steelyard.core.display import visible

def clean(text: object) -> str:
    """`text` as a string with every control character replaced by a visible symbol."""
    return visible(text)


def literal(text: object, style: str = "") -> Text:
    """A rich Text that shows `text` exactly (cleaned), never parsed as markup."""
    return Text(clean(text), style=style, no_wrap=False)
