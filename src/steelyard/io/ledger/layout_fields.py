"""What the in-place writer compares: each table of a ledger as an entry, its keys' text, and sameness.

A ledger's tables, by their file name: arrays of tables (`item`, `loadout`,
...) are lists of entries matched between two ledgers by a key (an item's id,
a loadout's name, a change's position); single tables (`units`, `mac`, ...)
are one entry or none. `fields` turns an entry into {key: value text} (a
nested dict for a table that may sit under its own header, such as
`[loadout.set]`), the text being exactly what the canonical writer writes, so
two entries whose fields are equal are written alike. `same_ledger` is the
writer's final check: the text it produced, read back, must mean the new
ledger (v1 numbers within 2 units in the last place, the writer's bound;
everything else exactly, types included).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import fields as dc_fields, is_dataclass

from steelyard.core.document.model import ITEM_MORE, FileUnits, Ledger
from steelyard.io.ledger.toml_write import key, table_blocks, value
from steelyard.io.ledger.write import (amount_text, change_lines, envelope_fields, envelope_lines, frame_fields, item_fields,
                                       item_lines, loadout_fields, loadout_lines, table_lines, units_fields)

#: arrays of tables: file name -> Ledger field
ARRAYS = {"item": "items", "loadout": "loadouts", "envelope": "envelopes", "limit": "limits",
          "allocation": "allocations", "sequence": "sequences", "change": "changes", "assembly": "assemblies"}
#: single tables: file name -> Ledger field
SINGLES = {"units": "units", "frame": "frame", "mac": "mac", "fuel": "fuel", "growth": "growth",
           "weighing": "weighing", "user": "user", "snapshot": "snapshot"}
#: where the canonical writer puts each table; a table new to a file goes after the nearest one before it
ORDER = ("units", "frame", "item", "loadout", "envelope", "allocation", "assembly", "change", "fuel", "growth", "limit",
         "mac", "sequence", "user", "weighing", "snapshot")
#: tables whose text depends on the file's [units]
UNIT_BOUND = frozenset({"item", "envelope"})
_KEY_FIELD = {"limit": "name", "sequence": "name", "allocation": "group", "assembly": "id"}


def entries(ledger: Ledger, kind: str) -> list:
    """The entries of one table kind; a single table is [] when absent or empty (the canonical writer omits it)."""
    v = getattr(ledger, ARRAYS.get(kind) or SINGLES[kind])
    if kind in ARRAYS:
        return list(v)
    if kind in ("units", "frame"):
        return [v]
    return [v] if v else []


def keys(kind: str, items: list) -> list:
    """What matches an entry between two ledgers: (key, occurrence), so a repeated name still matches once."""
    seen: dict = {}
    out = []
    for k, e in enumerate(items):
        if kind == "item":
            name = e.id
        elif kind in ("loadout", "envelope"):
            name = e.name
        elif kind in _KEY_FIELD and isinstance(e.get(_KEY_FIELD[kind]), str):
            name = e[_KEY_FIELD[kind]]
        else:
            name = k  # the change log, and a table without its name: by position
        n = seen.get(name, 0)
        seen[name] = n + 1
        out.append((name, n))
    return out


def _held(v: object) -> object:
    if isinstance(v, Mapping):
        return {k: _held(x) for k, x in v.items()}
    return value(v)


def _tables_held(out: dict, entry: object, names: tuple[str, ...]) -> dict:
    """Tables held as written become nested fields (their inline text is `render` of them, the same)."""
    for name in names:
        v = getattr(entry, name)
        if name in out and isinstance(v, Mapping):
            out[name] = _held(v)
    return out


def fields(kind: str, entry: object, units: FileUnits) -> dict:
    """{key: value text, or a dict for a sub-table}, as the canonical writer writes `entry`."""
    if kind == "item":
        return _tables_held(dict(item_fields(entry, units)), entry, ("loaded", "tolerance", "user"))
    if kind == "loadout":
        out: dict = _tables_held(dict(loadout_fields(entry)), entry, ("user",))
        if entry.set:
            out["set"] = {k: amount_text(a) for k, a in entry.set.items()}
        return out
    if kind == "envelope":
        return _tables_held(dict(envelope_fields(entry, units)), entry, ("user",))
    if kind == "units":
        return dict(units_fields(entry))
    if kind == "frame":
        return dict(frame_fields(entry))
    return _held(entry)


def render(v: object) -> str:
    """A field's text as an inline TOML value."""
    if isinstance(v, dict):
        return "{ " + ", ".join(f"{key(k)} = {render(x)}" for k, x in v.items()) + " }" if v else "{}"
    return v


def entry_text(kind: str, entry: object, units: FileUnits) -> str:
    """The canonical text of one entry (no trailing newline), exactly as `ledger_to_toml` writes it."""
    if kind == "item":
        blocks = [item_lines(entry, units)]
    elif kind == "loadout":
        blocks = [loadout_lines(entry)]
    elif kind == "envelope":
        blocks = [envelope_lines(entry, units)]
    elif kind == "units":
        blocks = [table_lines("units", units_fields(entry))]
    elif kind == "frame":
        blocks = [table_lines("frame", frame_fields(entry))]
    elif kind == "change":
        blocks = [change_lines(entry)]
    else:
        blocks = table_blocks(key(kind), dict(entry), array=kind in ARRAYS)
    return "\n\n".join("\n".join(b) for b in blocks)


# ------------------------------------------------------------------ sameness


def strict_equal(a: object, b: object) -> bool:
    """Equal as TOML values: types too (1 is not 1.0 nor true), nan equal to nan, tables in any key order."""
    if a is b:
        return True
    if isinstance(a, Mapping) and isinstance(b, Mapping):
        return a.keys() == b.keys() and all(strict_equal(a[k], b[k]) for k in a)
    if isinstance(a, (list, tuple)) and isinstance(b, (list, tuple)):
        return len(a) == len(b) and all(strict_equal(x, y) for x, y in zip(a, b))
    if type(a) is not type(b):
        return False
    if type(a) is float:
        return a == b or (a != a and b != b)
    return a == b


def same_entry(kind: str, a: object, b: object) -> bool:
    """Cheap test that two entries are written alike in the same units (False may still write alike)."""
    if a is b:
        return True
    if kind == "item":
        return a == b and all(strict_equal(getattr(a, f), getattr(b, f)) for f in ITEM_MORE
                              if getattr(a, f) is not None)
    if kind in ("loadout", "envelope"):
        more = ("condition", "off", "on", "user") if kind == "loadout" else (
            "conditions", "loadouts", "sequences", "units", "user")
        return a == b and all(strict_equal(getattr(a, f), getattr(b, f)) for f in more)
    if kind in ("units", "frame"):
        return a == b
    return strict_equal(a, b)


def _close(a: object, b: object) -> bool:
    """Equal, floats within 2 units in the last place (the writer's bound for v1 numbers)."""
    if a is b:
        return True
    if type(a) is float and type(b) is float:
        if a == b or (a != a and b != b):
            return True
        return math.isfinite(a) and math.isfinite(b) and abs(a - b) <= 2 * math.ulp(max(abs(a), abs(b)))
    if is_dataclass(a) and type(a) is type(b):
        return all(_close(getattr(a, f.name), getattr(b, f.name)) for f in dc_fields(a))
    if isinstance(a, Mapping) and isinstance(b, Mapping):
        return a.keys() == b.keys() and all(_close(a[k], b[k]) for k in a)
    if isinstance(a, (list, tuple)) and isinstance(b, (list, tuple)):
        return len(a) == len(b) and all(_close(x, y) for x, y in zip(a, b))
    return type(a) is type(b) and a == b


def same_ledger(a: Ledger, b: Ledger) -> bool:
    """`a` (the written text read back) means `b` (what was to be written)."""
    if a.units != b.units or a.frame != b.frame:
        return False
    for kind in ORDER:
        if kind in ("units", "frame"):
            continue
        xs, ys = entries(a, kind), entries(b, kind)
        if len(xs) != len(ys):
            return False
        for x, y in zip(xs, ys):
            if not (same_entry(kind, x, y) or _close(x, y)):
                return False
    return True

