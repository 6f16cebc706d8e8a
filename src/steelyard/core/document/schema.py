"""Every table and key the ledger format knows, and the strict check against it.

A ledger is a control document: a misspelt table (`[[limits]]`) or key
(`max_mas`) silently ignored would turn a limit off. So anything not named
here is an error with a "did you mean" hint — except under `user`, the one
place for the user's own data, which steelyard never reads and every writer
keeps verbatim (allowed at the top level and in every item, loadout,
envelope, limit, allocation and sequence).

Each entry maps a key to what it holds: `VALUE` (any value; its own reader
checks it), a nested schema dict (a table, or an array of tables when listed
in `ARRAYS`), or `OPEN` (a table whose keys are names the user chooses, e.g.
growth categories or item ids in `[loadout.set]`).
"""

from __future__ import annotations

from collections.abc import Mapping

from steelyard.core.errors import SteelyardError, said

VALUE = "value"
OPEN = "open"
USER = "user"

UNITS = {"mass": VALUE, "length": VALUE, "inertia": VALUE, "volume": VALUE, "density": VALUE}
FRAME = {"x": VALUE, "y": VALUE, "z": VALUE}
ITEM = {"id": VALUE, "name": VALUE, "group": VALUE, "mass": VALUE, "cg": VALUE, "quantity": VALUE,
        "inertia": VALUE, "shape": VALUE, "rotate": VALUE, "variable": VALUE, "density": VALUE,
        "maturity": VALUE, "growth": VALUE, "tolerance": VALUE, "removable": VALUE, "cg_table": VALUE,
        "loaded": VALUE, USER: OPEN}
LOADOUT = {"name": VALUE, "base": VALUE, "set": OPEN, "off": VALUE, "on": VALUE, "condition": VALUE, USER: OPEN}
SCOPE = {"conditions": VALUE, "loadouts": VALUE, "sequences": VALUE}
ENVELOPE = {"name": VALUE, "axis": VALUE, "points": VALUE, "units": VALUE, **SCOPE, USER: OPEN}
LIMIT = {"name": VALUE, **SCOPE, "max_mass": VALUE, "min_mass": VALUE, "max_inertia": VALUE, "min_inertia": VALUE,
         "max_cg_offset": VALUE, "axis": VALUE, "through": VALUE, USER: OPEN}
MAC = {"lemac": VALUE, "length": VALUE}
FUEL = {"groups": VALUE, "items": VALUE}
ALLOCATION = {"group": VALUE, "mass": VALUE, USER: OPEN}
WEIGHING_POINT = {"name": VALUE, "at": VALUE, "reading": VALUE, "tare": VALUE}
WEIGHING_ADJUST = {"name": VALUE, "item": VALUE, "mass": VALUE, "volume": VALUE, "density": VALUE, "at": VALUE}
WEIGHING = {"point": WEIGHING_POINT, "on_board": WEIGHING_ADJUST, "missing": WEIGHING_ADJUST, "replaces": VALUE,
            "vertical_cg": VALUE, "date": VALUE, "note": VALUE, "by": VALUE}
STEP = {"name": VALUE, "samples": VALUE, "burn": VALUE, "remove": VALUE, "add": VALUE, "amount": VALUE}
SEQUENCE = {"name": VALUE, "loadout": VALUE, "end_condition": VALUE, "samples": VALUE, "step": STEP, USER: OPEN}
CHANGE = {"time": VALUE, "author": VALUE, "action": VALUE, "item": VALUE, "summary": VALUE, "reason": VALUE,
          "request": VALUE, "d_mass_kg": VALUE, "d_cg_m": VALUE, "d_margin_m": OPEN, "before": OPEN, "after": OPEN}
SNAPSHOT = {"format": VALUE, "taken": VALUE, "author": VALUE, "source": VALUE, "source_sha256": VALUE,
            "loadout": VALUE, "condition": VALUE, "names": OPEN, "sources": VALUE, "steelyard_version": VALUE, "caution": VALUE, "content_sha256": VALUE, "totals": OPEN,
            "envelopes": OPEN}

ASSEMBLY = {"id": VALUE, "file": VALUE, "group": VALUE, "at": VALUE, "mirror": VALUE, "rotate": VALUE, USER: OPEN}

TOP = {"steelyard": VALUE, "units": UNITS, "frame": FRAME, "item": ITEM, "loadout": LOADOUT, "envelope": ENVELOPE,
       "limit": LIMIT, "mac": MAC, "fuel": FUEL, "growth": OPEN, "allocation": ALLOCATION, "weighing": WEIGHING,
       "sequence": SEQUENCE, "change": CHANGE, "snapshot": SNAPSHOT, "assembly": ASSEMBLY, USER: OPEN}

#: keys written as arrays of tables ([[name]]); the rest of the nested schemas are single tables
ARRAYS = frozenset({"assembly", "item", "loadout", "envelope", "limit", "allocation", "sequence", "change",
                    "point", "on_board", "missing", "step"})


def did_you_mean(word: str, known) -> str:
    """' (did you mean "limit"?)' for a near miss, else the list of known names."""
    import difflib  # only when a name is wrong: 7 ms of start-up otherwise

    near = difflib.get_close_matches(str(word), [str(k) for k in known], n=1, cutoff=0.7)
    if near:
        return f" (did you mean {said(near[0])}?)"
    own = "; your own data goes under 'user'" if USER in known else ""
    return f" (known: {', '.join(sorted(k for k in known if k != USER))}{own})"


def unknown_key(key: str, known, *, subject: str | None, field_prefix: str = "") -> SteelyardError:
    where = "table" if subject is None else "key"
    return SteelyardError(f"unknown {where} {said(key)}{did_you_mean(key, known)}", subject=subject,
                          field=f"{field_prefix}{key}")


#: id(schema) -> (schema kept alive so the id stays its own, its keys that hold no sub-table)
_PLAIN: dict[int, tuple[Mapping, frozenset]] = {}


def check_keys(raw: Mapping, schema: Mapping, *, subject: str | None, field_prefix: str = "") -> None:
    """Refuse keys `schema` does not know, recursively into known sub-tables; `user` is never looked into."""
    plain = _PLAIN.get(id(schema))
    if plain is None:
        plain = _PLAIN[id(schema)] = (schema, frozenset(k for k, v in schema.items() if not isinstance(v, dict)))
    rest = raw.keys() - plain[1]  # one set operation in C for the usual table: known keys, no sub-tables
    if not rest:
        return
    for key, value in raw.items():
        if key not in rest:
            continue
        spec = schema.get(key)
        if spec is None:
            raise unknown_key(key, schema, subject=subject, field_prefix=field_prefix)
        if not isinstance(spec, dict):
            continue
        path = f"{field_prefix}{key}"
        if key in ARRAYS and isinstance(value, list):
            for k, entry in enumerate(value, start=1):
                if isinstance(entry, Mapping):
                    check_keys(entry, spec, subject=subject, field_prefix=f"{path} {k} ")
        elif isinstance(value, Mapping):
            check_keys(value, spec, subject=subject, field_prefix=f"{path}.")


def subject_of(kind: str, entry: object, k: int) -> str:
    """How a message names one table of an array: by its name/id/group, else by position."""
    if isinstance(entry, Mapping):
        for key in ("id", "name", "group"):
            v = entry.get(key)
            if isinstance(v, str) and v:
                return f"{kind} {said(v)}"
    return f"{kind} #{k}"


def check_document(data: Mapping) -> None:
    """The whole parsed file against the schema: one located error for the first unknown table or key."""
    for key, value in data.items():
        spec = TOP.get(key)
        if spec is None:
            raise unknown_key(key, TOP, subject=None)
        if not isinstance(spec, dict):
            continue
        if key in ARRAYS:
            if isinstance(value, list):
                for k, entry in enumerate(value, start=1):
                    if isinstance(entry, Mapping):
                        try:
                            check_keys(entry, spec, subject=None)
                        except SteelyardError:  # named only when wrong: naming 100,000 items costs a second
                            check_keys(entry, spec, subject=subject_of(key, entry, k))
        elif isinstance(value, Mapping):
            check_keys(value, spec, subject=key)
