"""Edits of a resolved tree without reading it again: one placement's rows out, the new ones in.

The editor changes a placement (`at`, `mirror`, `rotate`, ...), adds or
removes one, or saves a placed file; each is a splice of the flat ledger's
items and columns, so a 100,000-item tree refreshes its totals in
milliseconds. The placed file's own resolved ledger comes with the edit (the
editor has it, from io.ledger.tree); nothing here reads a file.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import replace

from steelyard.core.assembly.flatten import Placed, concatenate, nested_records, place
from steelyard.core.assembly.placement import read_placement, read_placements
from steelyard.core.document.model import ItemArrays, Ledger
from steelyard.core.errors import SteelyardError, said
from steelyard.core.loading.tank import read_table


def top_placements(ledger: Ledger) -> list[Placed]:
    """The placements this file itself makes (depth 1), in row order."""
    return [p for p in ledger.placed if p.depth == 1]


def _slice(a: ItemArrays, start: int, stop: int) -> ItemArrays:
    rows, values = a.own_sparse()
    keep = (rows >= start) & (rows < stop)
    return ItemArrays.sparse(a.unit_mass[start:stop], a.quantity[start:stop], a.cg[start:stop],
                             a.variable[start:stop], rows[keep] - start, values[keep])


def _splice(ledger: Ledger, start: int, stop: int, items: list, arrays: ItemArrays | None,
            records: list[Placed], assemblies: tuple, drop: str | None) -> Ledger:
    """Rows [start, stop) replaced by `items`; placements of `drop` replaced by `records`; rows after shifted."""
    shift = len(items) - (stop - start)
    placed = []
    for q in ledger.placed:
        if drop is not None and (q.id == drop or q.id.startswith(drop + "/")):
            continue
        if q.start >= stop and shift:
            q = Placed(q.id, q.file, q.sha256, q.start + shift, q.stop + shift, q.placement, q.depth, q.ledger)
        placed.append(q)
    placed.extend(records)
    placed.sort(key=lambda q: (q.start, q.depth))
    old = ledger.items
    new_items = old[:start] + tuple(items) + old[stop:]
    new = ledger.evolve(items=new_items, placed=tuple(placed), assemblies=assemblies)
    a = ledger.arrays
    parts = [_slice(a, 0, start)] + ([arrays] if arrays is not None else []) + [_slice(a, stop, len(old))]
    new.__dict__["arrays"] = concatenate(parts)
    _carry_tanks(ledger, new, start, stop, shift)
    if shift == 0 and all(o.id == n.id for o, n in zip(old[start:stop], items)):
        new.__dict__["index"] = ledger.index  # same ids in the same rows
    else:
        index = {it.id: i for i, it in enumerate(new_items)}
        if len(index) != len(new_items):
            clash = next(it.id for i, it in enumerate(new_items) if index[it.id] != i)
            raise SteelyardError(f"id {said(clash)} would be used twice", subject="assembly", field="id")
        new.__dict__["index"] = index
    return new


def _carry_tanks(old: Ledger, new: Ledger, start: int, stop: int, shift: int) -> None:
    """Tank CG tables outside the spliced rows follow their rows; those inside are read again."""
    cached = old.__dict__.get("_tank_tables")
    if cached is None:
        return
    tables = {}
    for i, tt in cached.items():
        if i < start:
            tables[i] = tt
        elif i >= stop:
            tables[i + shift] = replace(tt, row=i + shift)
    for i in range(start, stop + shift):
        if new.items[i].cg_table is not None:
            tables[i] = read_table(new, i)
    new.__dict__["_tank_tables"] = tables


def _placed_rows(ledger: Ledger, assembly_id: str) -> Placed:
    for q in ledger.placed:
        if q.depth == 1 and q.id == assembly_id:
            return q
    raise SteelyardError(f"no assembly {said(assembly_id)} in this file", subject=f"assembly {said(assembly_id)}")


def with_assembly(ledger: Ledger, k: int, table: Mapping, child: Ledger, file: str, sha256: str) -> Ledger:
    """[[assembly]] number k (0-based) replaced by `table` (as written), placing `child` (read from `file`)."""
    p = read_placement(table, k + 1, ledger.units)
    old_id = ledger.assemblies[k].get("id")
    others = {it.id for it in ledger.own_items} | {str(t.get("id")) for j, t in enumerate(ledger.assemblies)
                                                  if j != k}
    if p.id in others:
        raise SteelyardError("another item or assembly of this file has this id", subject=f"assembly {said(p.id)}",
                             field="id")
    rows = _placed_rows(ledger, old_id)
    items, arrays = place(child, p, ledger.units, ledger.frame)
    records = nested_records(child, p, file, sha256, rows.start)
    assemblies = ledger.assemblies[:k] + (dict(table),) + ledger.assemblies[k + 1:]
    return _splice(ledger, rows.start, rows.stop, items, arrays, records, assemblies, old_id)


def add_assembly(ledger: Ledger, table: Mapping, child: Ledger, file: str, sha256: str) -> Ledger:
    """A new [[assembly]] (as written), its items after every other row."""
    k = len(ledger.assemblies)
    p = read_placement(table, k + 1, ledger.units)
    read_placements(ledger.evolve(assemblies=ledger.assemblies + (dict(table),)),
                    {it.id for it in ledger.own_items})  # unique ids, none an item's
    n = len(ledger.items)
    items, arrays = place(child, p, ledger.units, ledger.frame)
    records = nested_records(child, p, file, sha256, n)
    return _splice(ledger, n, n, items, arrays, records, ledger.assemblies + (dict(table),), None)


def remove_assembly(ledger: Ledger, assembly_id: str) -> Ledger:
    """The file without the placement `assembly_id` (its items go too)."""
    rows = _placed_rows(ledger, assembly_id)
    assemblies = tuple(t for t in ledger.assemblies if t.get("id") != assembly_id)
    return _splice(ledger, rows.start, rows.stop, [], None, [], assemblies, assembly_id)


def with_placed_file(ledger: Ledger, file: str, child: Ledger, sha256: str) -> Ledger:
    """Every placement of `file` (as `Placed.file` names it) re-placed from its new contents `child`."""
    out = ledger
    for q in top_placements(ledger):
        if q.file != file:
            continue
        q = _placed_rows(out, q.id)
        items, arrays = place(child, q.placement, out.units, out.frame)
        records = nested_records(child, q.placement, file, sha256, q.start)
        out = _splice(out, q.start, q.stop, items, arrays, records, out.assemblies, q.id)
    return out

