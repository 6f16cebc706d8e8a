"""Where the CSV columns meet the document model: an item's keys beyond v1, file units.

The exchange code reads and writes an item's later keys (maturity, growth,
tolerance, cg_table, ...) by their file names, as one dict. The model may hold
them in one `extra` mapping or as named fields; this module is the only place
that knows which, so the CSV code stays the same either way.
"""

from __future__ import annotations

from dataclasses import fields

from steelyard.core.document.model import FileUnits, Item
from steelyard.core.errors import SteelyardError, said

#: Item fields of the v1 contract (and bookkeeping), never part of "the keys beyond v1"
_V1 = frozenset({"id", "mass", "cg", "name", "group", "quantity", "inertia", "shape", "rotate", "variable",
                 "density", "given_units", "extra"})
_ITEM_FIELDS = frozenset(f.name for f in fields(Item))
_UNIT_FIELDS = frozenset(f.name for f in fields(FileUnits))
#: the item keys beyond v1 this model can hold by name (empty: it keeps any key in `extra`)
NAMED_KEYS = frozenset() if "extra" in _ITEM_FIELDS else _ITEM_FIELDS - _V1


def item_more(item: Item) -> dict[str, object]:
    """The item's keys beyond v1 as written in the file, by key."""
    extra = getattr(item, "extra", None)
    if extra is not None:
        return dict(extra)
    out = {}
    for name in sorted(NAMED_KEYS):
        v = getattr(item, name)
        if v is not None and v is not False:
            out[name] = list(v) if isinstance(v, tuple) else v
    return out


def more_problem(more: dict) -> str | None:
    """Why an item cannot carry these keys in this model, or None."""
    if not NAMED_KEYS:
        return None
    unknown = sorted(k for k in more if k not in NAMED_KEYS)
    if unknown:
        return (f"unknown item key {said(unknown[0])} (known: {', '.join(sorted(NAMED_KEYS))}; "
                "your own data goes under user = { ... })")
    return None


def make_item(ident: str, mass: float, cg: tuple, *, more: dict, **v1) -> Item:
    """An Item from its v1 fields and its keys beyond v1 (checked with `more_problem` first)."""
    if not NAMED_KEYS:
        return Item(ident, mass, cg, extra=dict(more), **v1)
    named = {k: (tuple(x) if k == "cg_table" and isinstance(x, list) else x) for k, x in more.items()}
    problem = more_problem(named)
    if problem:
        raise SteelyardError(problem, field="other")
    return Item(ident, mass, cg, **v1, **named)


def density_unit(units: FileUnits) -> str | None:
    """The file's own unit for bare densities, if it names one."""
    extra = getattr(units, "extra", None)
    return extra.get("density") if extra is not None else getattr(units, "density", None)


def file_units(mass: str, length: str, inertia: str, density: str | None) -> FileUnits:
    if "extra" in _UNIT_FIELDS:
        return FileUnits(mass, length, inertia, {"density": density} if density else {})
    return FileUnits(mass, length, inertia, density=density)
