"""Journal records of a tree: about the file as written, with the placed rows made again on replay.

A ledger with [[assembly]] tables is one flat ledger in the editor (its own
items, then every placement's items), but only its own items and the tables
belong to the file. The journal records those (`own_rows`, an "assemblies"
record), so a replay never turns a placed item into one of the file's own;
`placed_again` rebuilds the flat ledger after the replay, reusing the rows
of every placement whose table did not change and placing the others from
the child ledgers the tree already holds (or `children(file)` for a file
placed for the first time).
"""

from __future__ import annotations

import itertools
import posixpath

from steelyard.core.assembly.flatten import Placed, nested_records, place
from steelyard.core.assembly.placement import read_placement
from steelyard.core.document.model import Item, Ledger


def own_rows(ledger: Ledger) -> tuple[Item, ...]:
    """The file's own items, in row order (the rows outside every top placement; C-speed slices)."""
    if not ledger.placed:
        return ledger.items
    parts, at = [], 0
    for start, stop in sorted((q.start, q.stop) for q in ledger.placed if q.depth == 1):
        parts.append(ledger.items[at:start])
        at = stop
    parts.append(ledger.items[at:])
    return tuple(itertools.chain.from_iterable(parts))


def _moved(records, shift: int) -> list[Placed]:
    return [Placed(r.id, r.file, r.sha256, r.start + shift, r.stop + shift, r.placement, r.depth, r.ledger)
            for r in records]


def placed_again(ledger: Ledger, own: tuple[Item, ...], changes: dict, loadouts: tuple, children=None) -> Ledger:
    """`ledger` with own items `own`, the fields in `changes` and its placements made again (see module doc).

    Raises KeyError for a file that is not placed yet when `children` is None,
    ValueError for an id used twice, SteelyardError for a bad [[assembly]] table.
    """
    tables = tuple(changes.get("assemblies", ledger.assemblies))
    units, frame = changes.get("units", ledger.units), changes.get("frame", ledger.frame)
    reuse = units == ledger.units and frame == ledger.frame
    before = {str(t.get("id")): dict(t) for t in ledger.assemblies}
    tops = {q.id: q for q in ledger.placed if q.depth == 1}
    known = {q.file: (q.ledger, q.sha256) for q in tops.values() if q.ledger is not None}
    items: list[Item] = list(own)
    placed: list[Placed] = []
    for k, table in enumerate(tables, 1):
        p = read_placement(table, k, units)
        q = tops.get(p.id)
        start = len(items)
        if reuse and q is not None and before.get(p.id) == dict(table):
            items.extend(ledger.items[q.start:q.stop])
            placed.extend(_moved([r for r in ledger.placed if r.id == q.id or r.id.startswith(q.id + "/")],
                                 start - q.start))
            continue
        shown = posixpath.normpath(p.file)
        if shown in known:
            child, sha = known[shown]
        elif children is not None:
            child, sha = children(p.file)
        else:
            raise KeyError(f"places {p.file!r}, which this ledger does not place yet")
        new_items, _ = place(child, p, units, frame)
        items.extend(new_items)
        placed.extend(nested_records(child, p, shown, sha, start))
    index = {it.id: i for i, it in enumerate(items)}
    if len(index) != len(items):
        clash = next(it.id for i, it in enumerate(items) if index[it.id] != i)
        raise ValueError(f"id {clash!r} would be used twice")
    rest = {k: v for k, v in changes.items() if k != "assemblies"}
    new = ledger.evolve(items=tuple(items), loadouts=loadouts, placed=tuple(placed), assemblies=tables, **rest)
    new.__dict__["index"] = index
    return new
