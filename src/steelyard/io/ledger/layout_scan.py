"""Where each table of a ledger's text starts and ends, without parsing its values.

The layout-preserving writer (io.ledger.layout) edits a file in place, so it
must know exactly which bytes belong to which table. A header line (`[name]`,
`[[name]]`, `[name.sub]`) starts a table only when it is not inside a
multi-line string or a multi-line array: the scanner follows strings
(basic, literal and both multi-line kinds, with their escapes), comments and
bracket depth, so a header-like line inside a value is never taken for one.
Strings and flat one-line arrays are skipped by the regular expression
itself, which keeps a 100,000-item file to a few hundred thousand matches.

Each table of the file becomes a `Piece`: its header's run of blank lines and
the comments directly above it (they go with it: deleting an item removes its
comment), the body (header to last value line, comments inside included), and
comment lines directly below it. A comment separated from the next header by
a blank line (a section banner) belongs to nobody and stays where it is.
"""

from __future__ import annotations

import re
import tomllib
from dataclasses import dataclass
from functools import lru_cache
from typing import NamedTuple

_BARE = r"[A-Za-z0-9_-]+"
_BASIC = r'"(?:[^"\\\n]|\\.)*"'
_LITERAL = r"'[^'\n]*'"
_KEY = rf"(?:{_BARE}|{_BASIC}|{_LITERAL})"
_KEYPATH = rf"{_KEY}(?:[ \t]*\.[ \t]*{_KEY})*"
# a multi-line basic string ends at the first unescaped """, which may be followed by one or two more quotes
_ML_BASIC = r'"""(?:[^"\\]|\\[\s\S]|"(?!""))*""""{0,2}'
_ML_LITERAL = r"'''[\s\S]*?''''{0,2}"
_FLAT = r"""\[[^\[\]{}"'#\n]*\]|\{[^\[\]{}"'#\n]*\}"""

_KEY_RE = re.compile(_KEY)
HEADER = re.compile(rf"[ \t]*(\[\[?)[ \t]*({_KEYPATH})[ \t]*(\]\]?)[ \t]*(?:#[^\n]*)?\r?(?:\n|\Z)")
_KEY_EQ = re.compile(rf"[ \t]*({_KEYPATH})[ \t]*=[ \t]*")
# a run of whole lines that are certainly complete at depth 0: blank, comment, or `key = one-line value`
# (bare keys only and an unrolled string: quoted keys and the rest take the slower, general path)
_SIMPLE_VALUE = rf"""(?:"[^"\\\n]*(?:\\.[^"\\\n]*)*"|{_LITERAL}|{_FLAT}|[A-Za-z0-9_:.+-]+)"""
_SIMPLE_RUN = re.compile(rf"(?:[ \t]*(?:{_BARE}[ \t]*=[ \t]*{_SIMPLE_VALUE}[ \t]*)?(?:#[^\n]*)?\r?\n)*")
_VALUE = re.compile(
    rf"(?P<s>{_ML_BASIC}|{_ML_LITERAL}|{_BASIC}|{_LITERAL})|(?P<c>#[^\n]*)|(?P<o>[\[{{])|(?P<x>[\]}}])|(?P<n>\n)")


class Unsupported(Exception):
    """The text is laid out in a way the in-place writer does not edit (the canonical writer takes over)."""


@lru_cache(maxsize=4096)
def _decode_key(token: str) -> str:
    if token[0] == "'":
        return token[1:-1]
    if token[0] == '"':
        return tomllib.loads(f"k = {token}")["k"]
    return token


def key_path(text: str) -> tuple[str, ...]:
    """`a."b.c".d` -> ("a", "b.c", "d")."""
    return tuple(_decode_key(t) for t in _KEY_RE.findall(text))


class Header(NamedTuple):
    start: int  # start of the header line
    end: int  # after its newline
    path: tuple[str, ...]
    array: bool
    barrier: int  # end of the last multi-line value before it: comments are looked for after this only


def scan_headers(text: str) -> tuple[list[Header], int]:
    """Every top-level table header in file order, and the end of the last multi-line value.

    A small state machine: at the start of a line outside any value, a run
    of simple lines is skipped in one match; a header line is read; anything
    else is one statement followed through its strings and brackets to the
    newline that ends it.
    """
    out: list[Header] = []
    barrier = 0
    pos = 0
    n = len(text)
    run, header = _SIMPLE_RUN.match, HEADER.match
    paths: dict[str, tuple[str, ...]] = {}
    while pos < n:
        pos = run(text, pos).end()
        if pos >= n:
            break
        h = header(text, pos)
        if h is not None:
            if len(h.group(1)) != len(h.group(3)):
                raise Unsupported(f"unreadable table header at offset {pos}")
            name = h.group(2)
            path = paths.get(name)
            if path is None:
                path = paths[name] = key_path(name)
            out.append(Header(pos, h.end(), path, len(h.group(1)) == 2, barrier))
            pos = h.end()
            continue
        _, pos = _value_end(text, pos)
        barrier = pos  # whatever this statement spanned ends here
    return out, barrier


def _kind(text: str, s: int, e: int) -> str:
    t = text[s:e].strip(" \t\r\n")
    return "blank" if not t else ("comment" if t[0] == "#" else "content")


def _lines_back(text: str, end: int, lower: int) -> tuple[list[tuple[int, str]], int]:
    """The blank and comment-only lines just before `end` (not before `lower`), and where they start."""
    lines: list[tuple[int, str]] = []
    while end > lower:
        s = text.rfind("\n", 0, end - 1) + 1
        if s < lower:
            break
        k = _kind(text, s, end)
        if k == "content":
            break
        lines.append((s, k))
        end = s
    lines.reverse()
    return lines, end


class Piece(NamedTuple):
    """A stretch of the text: [start, body_start) leading blanks and comments, the body, trailing comments.

    `header` is the index of the table's header in `scan_headers`' list, -1
    for the text before the first header, None for text nobody owns.
    """

    start: int
    body_start: int
    body_end: int
    end: int
    header: int | None


def _split(lines: list[tuple[int, str]], region_end: int) -> tuple[int, int]:
    """(end of the previous table's trailing comments, start of the next header's leading lines)."""
    if not lines:
        return region_end, region_end
    if len(lines) == 1 and lines[0][1] == "blank":  # the usual single blank line between tables
        return lines[0][0], lines[0][0]
    kinds = [k for _, k in lines]
    n = len(kinds)
    i = n
    while i > 0 and kinds[i - 1] == "comment":  # comments right above the header
        i -= 1
    while i > 0 and kinds[i - 1] == "blank":  # and the blank lines above those
        i -= 1
    j = 0
    while j < i and kinds[j] == "comment":  # comments right below the previous table's last line
        j += 1
    if i == 0:
        j = 0
    starts = [s for s, _ in lines] + [region_end]
    return starts[j], starts[i]


def pieces(text: str) -> tuple[list[Piece], list[Header]]:
    """The whole text as pieces, in order, covering every byte exactly once."""
    headers, last_barrier = scan_headers(text)
    out: list[Piece] = []
    start, body_start, owner = 0, 0, -1  # the piece being finished: the text before the first header
    for k in range(len(headers) + 1):
        if k < len(headers):
            h = headers[k]
            end, lower = h.start, max(h.barrier, headers[k - 1].end if k else 0)
        else:
            end, lower = len(text), max(last_barrier, headers[-1].end if headers else 0)
        lines, region_start = _lines_back(text, end, lower)
        if k < len(headers):
            trail_end, lead_start = _split(lines, end)
        else:  # end of file: comments right below the last table are its own, the rest nobody's
            j = 0
            while j < len(lines) and lines[j][1] == "comment":
                j += 1
            trail_end, lead_start = ([s for s, _ in lines] + [end])[j], end
        out.append(Piece(start, body_start, region_start, trail_end, owner))
        if trail_end < lead_start:
            out.append(Piece(trail_end, trail_end, lead_start, lead_start, None))
        if k < len(headers):
            start, body_start, owner = lead_start, headers[k].start, k
    return out, headers


@dataclass(frozen=True)
class Statement:
    """One line-starting statement of a table's body: a header, or `key = value` (value maybe over lines)."""

    start: int  # start of its first line
    end: int  # after the newline ending its last line
    path: tuple[str, ...]
    header: bool
    array: bool = False
    value_start: int = 0
    value_end: int = 0  # the value's last character + 1 (spaces and a comment after it excluded)


def _value_end(text: str, pos: int) -> tuple[int, int]:
    """(end of the value starting at `pos`, end of its last line) through strings, brackets and comments."""
    depth = 0
    p = pos
    search = _VALUE.search
    while True:
        m = search(text, p)
        if m is None:
            return _back_over_space(text, pos, len(text)), len(text)
        g = m.lastgroup
        if depth == 0 and g in ("n", "c"):
            nl = text.find("\n", m.start())
            line_end = len(text) if nl < 0 else nl + 1
            return _back_over_space(text, pos, m.start()), line_end
        if g == "o":
            depth += 1
        elif g == "x":
            depth -= 1
        p = m.end()


def _back_over_space(text: str, lo: int, i: int) -> int:
    while i > lo and text[i - 1] in " \t\r":
        i -= 1
    return i


def statements(text: str, start: int, end: int) -> list[Statement]:
    """The statements of text[start:end] (whole lines), skipping blank and comment lines."""
    out: list[Statement] = []
    pos = start
    while pos < end:
        nl = text.find("\n", pos, end)
        line_end = end if nl < 0 else nl + 1
        first = text[pos:line_end].lstrip(" \t")
        if not first.strip("\r\n") or first[0] == "#":
            pos = line_end
            continue
        if first[0] == "[":
            h = HEADER.match(text, pos)
            if h is None or len(h.group(1)) != len(h.group(3)):
                raise Unsupported(f"unreadable table header at offset {pos}")
            out.append(Statement(pos, h.end(), key_path(h.group(2)), True, len(h.group(1)) == 2))
            pos = h.end()
            continue
        k = _KEY_EQ.match(text, pos)
        if k is None:
            raise Unsupported(f"unreadable key at offset {pos}")
        value_end, stmt_end = _value_end(text, k.end())
        if stmt_end > end:
            raise Unsupported("a value runs past its table")
        out.append(Statement(pos, stmt_end, key_path(k.group(1)), False, False, k.end(), value_end))
        pos = stmt_end
    return out
