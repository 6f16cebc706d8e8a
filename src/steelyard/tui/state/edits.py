"""New ledgers for each edit the user can make: add, replace, delete, move.

Every function returns a new `Ledger` and leaves the old one untouched (undo
keeps it). The per-item columns are carried over with one row changed,
appended or removed instead of being rebuilt, so an edit on a 100,000-item
ledger costs a few array copies.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from steelyard.core.errors import SteelyardError
from steelyard.core.document.model import Amount, Item, ItemArrays, Ledger, with_arrays
from steelyard.core.loading.loadout_edits import rename_in_loadouts, with_amount


def _arrays_of(ledger: Ledger) -> ItemArrays | None:
    return ledger.__dict__.get("arrays")  # only when already built; never force a build


def _row_arrays(item: Item) -> ItemArrays:
    return ItemArrays.from_items([item])


def add_item(ledger: Ledger, item: Item) -> Ledger:
    if item.id in ledger.index:
        raise SteelyardError("an item with this id exists already", subject=f"item {item.id!r}", field="id")
    new = ledger.evolve(items=ledger.items + (item,))
    a = _arrays_of(ledger)
    if a is not None:
        r = _row_arrays(item)
        with_arrays(new, ItemArrays(*(np.concatenate([getattr(a, f), getattr(r, f)])
                                      for f in ("unit_mass", "quantity", "cg", "own", "variable"))))
    return new


def replace_item(ledger: Ledger, old_id: str, item: Item) -> Ledger:
    """Put `item` where `old_id` was (same place in the file); a new id is renamed in loadouts too."""
    i = ledger.index[old_id]
    if item.id == old_id:
        return ledger.with_item(item)
    if item.id in ledger.index:
        raise SteelyardError("an item with this id exists already", subject=f"item {item.id!r}", field="id")
    items = ledger.items[:i] + (item,) + ledger.items[i + 1:]
    new = ledger.evolve(items=items, loadouts=tuple(rename_in_loadouts(ledger.loadouts, old_id, item.id)))
    a = _arrays_of(ledger)
    if a is not None:
        with_arrays(new, a.with_row(i, item))
    return new


def delete_item(ledger: Ledger, item_id: str) -> Ledger:
    """Remove an item, and its amount from every loadout that names it."""
    i = ledger.index[item_id]
    new = ledger.evolve(items=ledger.items[:i] + ledger.items[i + 1:],
                        loadouts=tuple(rename_in_loadouts(ledger.loadouts, item_id, None)),
                        placed=rows_shifted(ledger.placed, i, -1))
    a = _arrays_of(ledger)
    if a is not None:
        with_arrays(new, ItemArrays(*(np.delete(getattr(a, f), i, axis=0)
                                      for f in ("unit_mass", "quantity", "cg", "own", "variable"))))
    return new


def rows_shifted(placed: tuple, row: int, by: int) -> tuple:
    """Placement records after row `row` moved by `by` rows (an own item before them removed)."""
    if not placed:
        return placed
    return tuple(q if q.start < row else replace(q, start=q.start + by, stop=q.stop + by) for q in placed)


def unique_id(ledger: Ledger, base: str) -> str:
    """`base-copy`, `base-copy2`, ... : the first id not in use."""
    candidate = f"{base}-copy"
    k = 2
    while candidate in ledger.index:
        candidate = f"{base}-copy{k}"
        k += 1
    return candidate


def duplicate_item(ledger: Ledger, item_id: str) -> tuple[Ledger, Item]:
    src = ledger.item(item_id)
    copy = src.evolve(id=unique_id(ledger, src.id))
    return add_item(ledger, copy), copy


def move_item(ledger: Ledger, item_id: str, group: str) -> Ledger:
    return ledger.with_item(ledger.item(item_id).evolve(group=group.strip().strip("/")))


def set_amount(ledger: Ledger, loadout: str, item_id: str, amount: Amount | None) -> Ledger:
    """A ledger whose loadout carries `amount` of a variable item (None: empty, i.e. not named)."""
    out = tuple(with_amount(lo, item_id, amount) if lo.name == loadout else lo for lo in ledger.loadouts)
    new = ledger.evolve(loadouts=out)
    a = _arrays_of(ledger)
    if a is not None:
        with_arrays(new, a)  # the items are the same objects
    if "index" in ledger.__dict__:
        new.__dict__["index"] = ledger.index
    return new
