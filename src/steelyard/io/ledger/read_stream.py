"""Ledger text -> `Ledger`, a piece at a time: a million items without a million-item parse tree.

The text is cut at `[[item]]` headers (io.ledger.toml_chunks); each piece is
parsed, its items checked and turned into Items and numpy columns, and its
parse tree dropped before the next piece is parsed. The peak is then the
items and columns plus one piece's tree, not the whole file's tree.

This path only ever says yes. Whatever it cannot vouch for — a piece the
parser refuses, a table in two pieces, [units] after the items, or any
problem in the data — sends the file through the whole-document path
(`ledger_from_data` of the parsed document, the item-by-item reader), so
every error is worded, and every file means, exactly what the whole-file
reading says. That document is still parsed in pieces when the pieces give
the same tables (`toml_chunks.parse_chunked`, else `parse_toml` at once).
"""

from __future__ import annotations

from operator import attrgetter

import numpy as np

from steelyard.core.document.model import ItemArrays, Ledger
from steelyard.core.document.schema import ITEM
from steelyard.core.errors import SteelyardError
from steelyard.io.ledger import toml_chunks
from steelyard.io.ledger.read import Progress, _ledger_from_data, has_bare_inertia, ledger_from_data, read_units
from steelyard.io.ledger.read_items import ItemsReader
from steelyard.io.ledger.toml_read import conflict_marker_line, parse_toml

_ITEM_KEYS = frozenset(ITEM)


def ledger_from_text(text: str, *, source: str, progress: Progress | None = None, fast: bool = True,
                     tree=None, tree_source=None, chunk_chars: int | None = None, memory=None) -> Ledger:
    """The ledger a TOML text describes; read piece by piece when that is safe, else as a whole.

    `memory` (io.ledger.read_reuse.ReadMemory): item tables read through it before are taken as read
    then; this reading is kept in it for the next."""
    at = toml_chunks.cuts(text, chunk_chars)
    if at is not None and conflict_marker_line(text) is None:
        try:
            return _streamed(text, at, source=source, progress=progress, fast=fast, tree=tree,
                             tree_source=tree_source, memory=memory)
        except (toml_chunks.NotChunkable, SteelyardError, OverflowError):
            pass  # the whole-file reading decides, and words any error
    if memory is not None:
        memory.earlier = None
    if progress is not None:
        progress("parsing", 0.0)
    # the whole document, parsed in pieces where that gives the same tables (a lower peak), else at once
    data = parse_toml(text, source=source, fast=fast) if at is None else toml_chunks.parse_chunked(
        text, source=source, fast=fast, size=chunk_chars)
    return ledger_from_data(data, source=source, progress=progress, tree=tree, tree_source=tree_source)


def _streamed(text: str, at: list[int], *, source: str, progress: Progress | None, fast: bool, tree,
              tree_source, memory=None) -> Ledger:
    reading = None if memory is None else memory.start(text[:at[0]], fast)
    data: dict = {}
    units = None
    seen: dict[str, int] = {}
    items: list = []
    parts: list[ItemArrays] = []
    bare = False
    total = max(len(text), 1)
    if progress is not None:
        progress("parsing", 0.0)
    rewrite = None if reading is None else reading.piece
    for k, (tables, raw, end) in enumerate(toml_chunks.pieces(text, at, fast, rewrite)):
        if k == 0:
            units = read_units(tables.get("units"), source)
        elif "units" in tables:
            raise toml_chunks.NotChunkable("[units] after the first item")
        if k == 1:
            data["item"] = []  # read below; the key keeps its place in the document's order
        data.update(tables)
        if not raw:
            continue
        for entry in raw:
            if type(entry) is not dict or not _ITEM_KEYS.issuperset(entry):
                raise toml_chunks.NotChunkable("an item the schema check must word")
        if reading is None and not bare:
            bare = has_bare_inertia(raw)
        got, arrays = ItemsReader(raw, units, source, None, seen).read()
        if reading is not None:
            reading.parsed_rows(raw, got)
        items.extend(got)
        parts.append(arrays)
        del raw, got, tables
        if progress is not None:
            progress("checking items", end / total)
    if not parts and (reading is None or not reading.code):
        raise toml_chunks.NotChunkable("no items")
    rows, values, start = [], [], 0
    for a in parts:  # own inertia stays sparse: each piece's rows moved to the file's row numbers
        r, v = a.own_sparse()
        rows.append(r + start)
        values.append(v)
        start += len(a.unit_mass)
    arrays = ItemArrays.sparse(np.concatenate([a.unit_mass for a in parts]),
                               np.concatenate([a.quantity for a in parts]),
                               np.asfortranarray(np.concatenate([a.cg for a in parts]).reshape(-1, 3)),
                               np.concatenate([a.variable for a in parts]), np.concatenate(rows),
                               np.concatenate(values).reshape(-1, 3, 3)) if parts else ItemArrays.sparse(
        *(np.empty(0), np.empty(0), np.empty((0, 3)), np.empty(0, dtype=bool), np.empty(0, dtype=np.intp),
          np.empty((0, 3, 3))))
    del parts
    more = kept = None
    if reading is not None:
        got = reading.assemble(items, arrays)
        if got is None:
            memory.earlier = None
            raise toml_chunks.NotChunkable("the item tables did not line up with the rows")
        items, arrays, bare = got
        if memory.reused:  # rows taken from the earlier reading: the index is made anew, a repeat refused
            seen = dict(zip(map(attrgetter("id"), items), range(len(items))))
            if len(seen) != len(items):
                memory.earlier = None
                raise toml_chunks.NotChunkable("a repeated id: the fresh reading words it")
            more = reading.more_rows(items)
        kept = reading.remember(items, arrays)
    ledger = _ledger_from_data(data, source=source, progress=progress, tree=tree, tree_source=tree_source,
                               read_items=(items, arrays, bare, seen), more_rows=more)  # seen: id -> row
    if kept is not None and not ledger.placed and len(ledger.items) == len(kept.items):
        kept.more = ledger.__dict__.get("_more_rows")  # the next reading looks only at its parsed rows
    return ledger
