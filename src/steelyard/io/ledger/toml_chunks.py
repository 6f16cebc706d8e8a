"""Cutting a ledger's text into pieces that parse alone and mean what the whole file means.

A whole-file parse of a million items builds the entire tree at once: the
compiled parser's own tree, then Python's dicts and lists, many times the
file's size. Cut at `[[item]]` header lines into pieces of about `CHUNK_CHARS`,
each piece can be parsed, read into columns and dropped before the next.

When the cut is safe: with no multi-line string in the text (no `\"\"\"` or
`'''` anywhere, comments included), every line that starts with `[[item]]`
is a header at the top level: no string spans a line, and `[[item]]` is not
a value an array could hold. A piece then starts in the state a fresh parse
starts in, except for what earlier pieces defined. So the pieces' parses are
the whole file's parse as long as no table is defined in two pieces: the
head (the text before the first cut) must not mention `item`, and no other
top-level key may appear in more than one piece. Anything else — a refusal
by the parser, a key in two pieces — is not decided here: the caller falls
back to the whole-file parse (io.ledger.toml_read.parse_toml), which says
exactly what the file means or words its error.
"""

from __future__ import annotations

import tomllib
from collections.abc import Callable, Iterator

from steelyard.io.ledger import toml_read

#: characters of text per piece: ~2 MB is ~13,000 items, a parse tree of a few tens of MB
CHUNK_CHARS = 1 << 21
_CUT = "\n[[item]]"


class NotChunkable(Exception):
    """The pieces cannot be shown to mean what the whole text means: parse the whole text instead."""


def cuts(text: str, size: int | None = None) -> list[int] | None:
    """Offsets where pieces start (the first is the end of the head), or None when cutting is not safe
    or not worth it (one piece)."""
    size = CHUNK_CHARS if size is None else size
    if '"""' in text or "'''" in text:
        return None
    if text.startswith("[[item]]"):
        first = 0
    else:
        at = text.find(_CUT)
        if at < 0:
            return None
        first = at + 1
    out = [first]
    n = len(text)
    while True:
        at = text.find(_CUT, out[-1] + max(size, 1))
        if at < 0:
            break
        out.append(at + 1)
    if len(out) < 2 and n - first <= size:
        return None
    return out


def loader(fast: bool = True) -> Callable[[str], dict]:
    """The parser the pieces go through: the same one a whole-file parse tries first."""
    rt = toml_read._rtoml
    if fast and rt is not None:
        return rt.loads
    return tomllib.loads


def pieces(text: str, at: list[int], fast: bool = True,
           rewrite: Callable[[int, str], str] | None = None) -> Iterator[tuple[dict, list, int]]:
    """(new top-level tables, the piece's [[item]] list, end offset) per piece; the head first, its
    list empty. Raises NotChunkable when a piece is refused or a table turns up in two pieces.
    `rewrite(k, piece)` gives the text actually parsed for piece k >= 1 (io.ledger.read_reuse: only
    the tables not read before; "" for none)."""
    loads = loader(fast)
    seen: set[str] = set()
    bounds = [0, *at, len(text)]
    for k in range(len(bounds) - 1):
        piece = text[bounds[k]:bounds[k + 1]]
        if k and rewrite is not None:
            piece = rewrite(k, piece)
            if not piece:
                yield {}, [], bounds[k + 1]
                continue
        try:
            d = loads(piece)
        except Exception:  # refused: the whole-file parse decides and words the error
            raise NotChunkable("a piece is refused") from None
        del piece
        if k == 0:
            if "item" in d:
                raise NotChunkable("the head defines item")
            items: list = []
        else:
            items = d.pop("item", None)
            if type(items) is not list:
                raise NotChunkable("a piece without an array of items")
        clash = seen.intersection(d)
        if clash:
            raise NotChunkable(f"{sorted(clash)[0]} is defined in two pieces")
        seen.update(d)
        yield d, items, bounds[k + 1]


def parse_chunked(text: str, *, source: str, fast: bool = True, size: int | None = None) -> dict:
    """What `parse_toml(text)` returns, parsed piece by piece where that is safe (lower peak memory)."""
    at = cuts(text, size)
    if at is None or toml_read.conflict_marker_line(text) is not None:
        return toml_read.parse_toml(text, source=source, fast=fast)
    out: dict = {}
    items: list = []
    try:
        for k, (tables, part, _end) in enumerate(pieces(text, at, fast)):
            if k == 1:
                out["item"] = items
            out.update(tables)
            items.extend(part)
    except NotChunkable:
        return toml_read.parse_toml(text, source=source, fast=fast)
    return out
