"""Unresolved merge conflicts in a ledger's text: found before parsing, named by line.

A merge that could not decide (`steelyard merge`, or git's own line merge)
leaves git-style marker lines (`<<<<<<< ours`, `=======`, `>>>>>>> theirs`)
around the disputed part. Such a file is not a ledger until a person picks
a side, and the TOML parser's own message ("invalid statement at line 12,
column 1") does not say why. Every reader therefore asks
`conflict_marker_line` first (io.ledger.toml_read.parse_toml): the CLI and
the editor both refuse the file with one line naming the marker's line.

A marker counts only at the start of a line outside a multi-line string,
where TOML allows no such line, so a valid ledger is never refused.
`string_spans` is shared with the merge writer, which finds table blocks
the same way.
"""

from __future__ import annotations

import bisect
import re

#: a marker line: seven of <, =, > or | at the start of a line, then a space or the line's end
_MARKER = re.compile(r"^(?:<{7}|={7}|>{7}|\|{7})(?=[ \t\r\n]|$)", re.M)
#: the tokens that can hide a marker or a header: strings (multi-line first) and comments
_TOKENS = re.compile(
    r'"""(?:[^"\\]|\\[\s\S]|"(?!""))*"""(?:"{1,2}(?!"))?'
    r"|'''[\s\S]*?'''(?:'{1,2}(?!'))?"
    r'|"(?:[^"\\\n]|\\.)*"'
    r"|'[^'\n]*'"
    r"|#[^\n]*")


def string_spans(text: str) -> list[tuple[int, int]]:
    """(start, end) offsets of every multi-line string that spans a line break, in order."""
    if '"""' not in text and "'''" not in text:
        return []
    return [m.span() for m in _TOKENS.finditer(text)
            if m.group(0)[:3] in ('"""', "'''") and "\n" in m.group(0)]


def inside(spans: list[tuple[int, int]], offset: int) -> bool:
    """Whether `offset` lies within one of `spans` (sorted, not overlapping)."""
    k = bisect.bisect_right(spans, (offset, float("inf"))) - 1
    return k >= 0 and spans[k][0] < offset < spans[k][1]


def conflict_marker_line(text: str) -> int | None:
    """The 1-based line of the first conflict marker outside a multi-line string, or None."""
    if "<<<<<<<" not in text and "=======" not in text and ">>>>>>>" not in text and "|||||||" not in text:
        return None
    spans: list[tuple[int, int]] | None = None
    for m in _MARKER.finditer(text):
        if spans is None:
            spans = string_spans(text)
        if not inside(spans, m.start()):
            return text.count("\n", 0, m.start()) + 1
    return None


def opening_lines(text: str) -> list[int]:
    """The 1-based lines of every opening marker (`<<<<<<<`) outside a multi-line string."""
    spans = string_spans(text)
    return [text.count("\n", 0, m.start()) + 1 for m in re.finditer(r"^<{7}(?=[ \t\r\n]|$)", text, re.M)
            if not inside(spans, m.start())]


def conflict_message(text: str, line: int) -> str:
    """The one-line refusal for a marker at `line`."""
    marker = text.splitlines()[line - 1][:7]
    return (f"line {line}: unresolved merge conflict (marker {marker!r}); keep one side and delete the "
            "marker lines, then read it again")
