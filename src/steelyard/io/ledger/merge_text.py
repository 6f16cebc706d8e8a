"""The text of a merged ledger: ours' layout, and git-style markers around each disputed entry.

The merge (core.history.merge) decides by meaning; this module writes the
result. The merged ledger is written over OURS's text so that what neither
side changed keeps its bytes (io.ledger.layout, which falls back to the one
canonical writer where it cannot). Each conflict then becomes

    <<<<<<< ours
    [[item]]            <- the entry as ours has it (its own text)
    ...
    =======
    [[item]]            <- as theirs has it (THEIRS's text when both files use
    ...                    the same units, else written in the result's units)
    >>>>>>> theirs

A side that removed the entry leaves its half empty. Entries are found in a
text by their table headers (a header inside a multi-line string does not
count) and, for arrays of tables, by the key read from the block itself.
"""

from __future__ import annotations

import re
import tomllib
from dataclasses import dataclass

from steelyard.core.document.model import Ledger
from steelyard.core.history.merge import Conflict, MergeResult
from steelyard.io.ledger.conflicts import inside, string_spans
from steelyard.io.ledger.write import ledger_to_toml
from steelyard.io.ledger.layout import preserving_text

#: arrays of tables merged by key: file name -> (Ledger field, key field)
ARRAYS = {"item": ("items", "id"), "loadout": ("loadouts", "name"), "envelope": ("envelopes", "name"),
          "limit": ("limits", "name"), "allocation": ("allocations", "group"), "sequence": ("sequences", "name"),
          "assembly": ("assemblies", "id")}
_KEY = r"""(?:[A-Za-z0-9_-]+|"(?:[^"\\\n]|\\.)*"|'[^'\n]*')"""
_HEADER = re.compile(rf"^[ \t]*\[(\[?)[ \t]*({_KEY}(?:[ \t]*\.[ \t]*{_KEY})*)[ \t]*\]\]?[ \t]*(?:#[^\n]*)?$", re.M)
_QUOTED_FIRST = re.compile(r'^("(?:[^"\\]|\\.)*"|\'[^\']*\')')


@dataclass(frozen=True)
class Block:
    """One table's text: from its header to the next table's header (trailing blanks and comments left out)."""

    table: str
    array: bool
    start: int
    end: int


def _first(path: str) -> str:
    m = _QUOTED_FIRST.match(path)
    if m:
        return m.group(1)[1:-1]
    return path.split(".", 1)[0].strip()


def _trim(text: str, start: int, end: int) -> int:
    """`end` moved back over trailing blank and comment-only lines (they introduce what follows)."""
    lines = text[start:end].splitlines(keepends=True)
    while len(lines) > 1 and (not lines[-1].strip() or lines[-1].lstrip().startswith("#")):
        end -= len(lines.pop())
    return end


def blocks(text: str) -> list[Block]:
    """Every top-level table of `text` with its sub-tables (`[loadout.set]`, `[[weighing.point]]`) inside it."""
    spans = string_spans(text)
    heads = []
    for m in _HEADER.finditer(text):
        if spans and inside(spans, m.start()):
            continue
        path = m.group(2)
        first = _first(path)
        whole = path.strip() == first or path.strip()[1:-1] == first and path.strip()[:1] in "\"'"
        heads.append((m.start(), first, whole, bool(m.group(1))))
    out: list[Block] = []
    current: list | None = None
    for start, first, whole, array in heads:
        if current is not None and current[0] == first and not whole:
            continue  # a sub-table of the current entry
        if current is not None:
            out.append(Block(current[0], current[1], current[2], _trim(text, current[2], start)))
        current = [first, array, start]
    if current is not None:
        out.append(Block(current[0], current[1], current[2], _trim(text, current[2], len(text))))
    return out


def _key(text: str, block: Block, key_field: str) -> str | None:
    try:
        data = tomllib.loads(text[block.start:block.end])
    except tomllib.TOMLDecodeError:
        return None
    entries = data.get(block.table)
    if not isinstance(entries, list) or len(entries) != 1 or not isinstance(entries[0], dict):
        return None
    v = entries[0].get(key_field)
    return v if isinstance(v, str) else None


def _parses(body: str, table: str) -> bool:
    """The block reads as that one table alone (a header seen in the wrong place would cut it short)."""
    try:
        return list(tomllib.loads(body)) == [table]
    except tomllib.TOMLDecodeError:
        return False


def locate(text: str, wanted: set[tuple[str, str]]) -> dict[tuple[str, str], tuple[int, int]]:
    """(table, key) -> (start, end) of each wanted entry found in `text`."""
    found: dict = {}
    tables = {t for t, _ in wanted}
    count: dict[str, int] = {}
    for b in blocks(text):
        if b.table not in tables:
            continue
        if b.table not in ARRAYS:
            if (b.table, b.table) in wanted and _parses(text[b.start:b.end], b.table):
                found[(b.table, b.table)] = (b.start, b.end)
            continue
        k = count[b.table] = count.get(b.table, 0) + 1
        keys = {key for t, key in wanted if t == b.table}
        body = text[b.start:b.end]
        if f"#{k}" not in keys and not any(key in body for key in keys):
            continue  # cheap: a block that cannot name a wanted key is not parsed
        key = _key(text, b, ARRAYS[b.table][1])
        key = f"#{k}" if key is None else key
        if key in keys:
            found[(b.table, key)] = (b.start, b.end)
    return found


def _canonical(conflict: Conflict, entry: object, units) -> str:
    """The entry alone, as the one writer writes it in the result's units."""
    if conflict.table in ARRAYS:
        mini = Ledger(units=units, **{ARRAYS[conflict.table][0]: (entry,)})
    elif conflict.table == "units":
        mini = Ledger(units=entry)
    else:
        mini = Ledger(units=units, **{conflict.table: entry})
    text = ledger_to_toml(mini)
    spot = locate(text, {(conflict.table, conflict.key)}).get((conflict.table, conflict.key))
    return text[spot[0]:spot[1]] if spot else ""


def _line(s: str) -> str:
    return s if not s or s.endswith("\n") else s + "\n"


def with_markers(text: str, conflicts: tuple[Conflict, ...], theirs_text: str | None, units) -> str | None:
    """`text` with each conflict's block between markers; None if a block cannot be found in it."""
    wanted = {(c.table, c.key) for c in conflicts}
    here = locate(text, wanted)
    if len(here) != len(wanted):
        return None
    there = locate(theirs_text, wanted) if theirs_text is not None else {}
    out = text
    for c in sorted(conflicts, key=lambda c: here[(c.table, c.key)][0], reverse=True):
        start, end = here[(c.table, c.key)]
        own = out[start:end]
        if c.theirs is None:
            theirs = ""
        elif (c.table, c.key) in there:
            s, e = there[(c.table, c.key)]
            theirs = theirs_text[s:e]
        else:
            theirs = _canonical(c, c.theirs, units)
        ours = own if c.ours is not None else ""
        if c.ours is None and not theirs:
            theirs = own
        out = (out[:start] + "<<<<<<< ours\n" + _line(ours) + "=======\n" + _line(theirs) + ">>>>>>> theirs\n"
               + out[end:])
    return out


def layout_text(ours_text: str, ours: Ledger, merged: Ledger) -> str:
    """The merged ledger written over ours' text (its comments, order and layout kept where unchanged)."""
    return preserving_text(ours_text, ours, merged)


def merged_text(ours_text: str, ours: Ledger, theirs_text: str, theirs: Ledger, result: MergeResult) -> str:
    """The whole result file: clean, or with markers around every conflict."""
    merged = result.ledger
    text = layout_text(ours_text, ours, merged)
    if result.clean:
        return text
    same_units = theirs.units == merged.units
    marked = with_markers(text, result.conflicts, theirs_text if same_units else None, merged.units)
    if marked is None:  # an entry laid out where blocks cannot be told apart: the canonical text has them all
        marked = with_markers(ledger_to_toml(merged), result.conflicts, theirs_text if same_units else None,
                              merged.units)
    return marked
