"""Where the CSV columns meet the document model: an item's keys beyond v1, file units.

The exchange code reads and writes an item's later keys (maturity, growth,
tolerance, cg_table, user, ...) by their file names, as one dict; the model
holds each as a named field (core.document.model.ITEM_MORE).
"""

from __future__ import annotations

from operator import attrgetter

from steelyard.core.document.model import ITEM_MORE, FileUnits, Item, more_keys
from steelyard.core.errors import SteelyardError, said

#: the item keys beyond v1 a CSV row may carry (in their own columns or under "other")
NAMED_KEYS = frozenset(ITEM_MORE)
_MORE = attrgetter(*ITEM_MORE)
#: what an item without any key beyond v1 holds in them (`removable` may be False or None)
_NONE = tuple(None for _ in ITEM_MORE)
_NONE_REMOVABLE = tuple(False if k == "removable" else None for k in ITEM_MORE)


def item_more(item: Item) -> dict[str, object]:
    """The item's keys beyond v1 as written in the file, by key."""
    held = _MORE(item)
    if held == _NONE or held == _NONE_REMOVABLE:  # most items: one comparison instead of seven look-ups
        return {}
    return {k: list(v) if isinstance(v, tuple) else v for k, v in sorted(more_keys(item).items())}


def more_problem(more: dict) -> str | None:
    """Why an item cannot carry these keys, or None."""
    unknown = sorted(k for k in more if k not in NAMED_KEYS)
    if unknown:
        return (f"unknown item key {said(unknown[0])} (known: {', '.join(sorted(NAMED_KEYS))}; "
                "your own data goes under user = { ... })")
    return None


def make_item(ident: str, mass: float, cg: tuple, *, more: dict, **v1) -> Item:
    """An Item from its v1 fields and its keys beyond v1."""
    named = {k: (tuple(x) if k == "cg_table" and isinstance(x, list) else x) for k, x in more.items()}
    problem = more_problem(named)
    if problem:
        raise SteelyardError(problem, field="other")
    return Item(ident, mass, cg, **v1, **named)


def density_unit(units: FileUnits) -> str | None:
    """The file's own unit for bare densities, if it names one."""
    return units.density


def file_units(mass: str, length: str, inertia: str, density: str | None) -> FileUnits:
    return FileUnits(mass, length, inertia, density=density)
