"""The `diff --json` record, always SI.

Keys from the issue's contract: added, removed, changed, a, b, delta,
envelopes (a and b follow the `rollup --json` contract). Added keys: the
sources, `identical`, `ranked` (every differing item by how far it alone
moves the CG), `delta.principal_kg_m2`, per-envelope margins, and changes to
the frame, the envelope definitions and (two whole ledgers) the loadouts, and
`definitions`: limits, allocations and sequences by name, [mac], [fuel],
[growth], [weighing] and [user] as wholes, each field [old, new] in SI.
"""

from __future__ import annotations

import math

import numpy as np

from steelyard.core.history.changes import logged_since
from steelyard.core.history.diff import DefinitionChanges, LedgerDiff
from steelyard.core.history.diff_tables import NAMED, SINGLE, TableChange, TableChanges
from steelyard.io.exchange.rollup_json import record_from


def _num(x) -> float | None:
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def _vec(v) -> list | None:
    return None if v is None else [_num(x) for x in np.asarray(v, dtype=float).ravel()]


def _mat(m) -> list | None:
    return None if m is None else [_vec(row) for row in np.asarray(m, dtype=float)]


def _plain(v):
    """Field values for JSON: finite floats or None, lists, dicts, strings."""
    if isinstance(v, float):
        return _num(v)
    if isinstance(v, (list, tuple)):
        return [_plain(x) for x in v]
    if isinstance(v, dict):
        return {k: _plain(x) for k, x in v.items()}
    if isinstance(v, (str, int, bool)) or v is None:
        return v
    return str(v)  # e.g. a TOML datetime kept in an unknown key


def _fields(fields) -> dict:
    return {k: [_plain(old), _plain(new)] for k, (old, new) in fields.items()}


def _definitions(d: DefinitionChanges | None) -> dict | None:
    if d is None:
        return None
    return {"added": list(d.added), "removed": list(d.removed),
            "changed": [{"name": n, "fields": _fields(f)} for n, f in d.changed]}


def _table(t: TableChange | None) -> dict | None:
    return None if t is None else {"status": t.status, "fields": _fields(t.fields)}


def _tables(t: TableChanges) -> dict:
    """Named definitions as {added, removed, changed}, single tables as null (same) or {status, fields}."""
    out: dict = {k: _definitions(getattr(t, k)) for k in NAMED}
    out.update({k: _table(getattr(t, k)) for k in SINGLE})
    for k in t.not_compared:
        out[k] = None
    out["not_compared"] = list(t.not_compared)
    return out


def diff_record(diff: LedgerDiff, a_source: dict | None = None, b_source: dict | None = None) -> dict:
    a, b = diff.a, diff.b
    a_name = a.loadout if a.loadout is not None else a_source.get("loadout") if a_source else None
    b_name = b.loadout if b.loadout is not None else b_source.get("loadout") if b_source else None
    out = {
        "identical": diff.identical,
        "a_source": a_source,
        "b_source": b_source,
        "added": list(diff.added),
        "removed": list(diff.removed),
        "changed": [{"id": c.id, "fields": _fields(c.fields), **({"file": c.file} if c.file else {})}
                    for c in diff.changed],
        "a": record_from(a.ledger, a.mp, a_name),
        "b": record_from(b.ledger, b.mp, b_name),
        "delta": {
            "mass_kg": _num(diff.delta_mass),
            "cg_m": _vec(diff.delta_cg),
            "inertia_cg_kg_m2": _mat(diff.delta_inertia),
            "principal_kg_m2": _vec(diff.delta_principal),
        },
        "envelopes": [
            {"name": e.name,
             "a_inside": None if e.a is None else e.a.inside,
             "b_inside": None if e.b is None else e.b.inside,
             "a_margin_m": None if e.a is None else _num(e.a.margin),
             "b_margin_m": None if e.b is None else _num(e.b.margin),
             "margin_delta_m": _num(e.margin_delta),
             "status_changed": e.status_changed}
            for e in diff.envelopes
        ],
        "ranked": [
            {"id": r.id, "kind": r.kind, "mass_delta_kg": _num(r.mass_delta),
             "cg_shift_m": _vec(r.cg_shift), "cg_shift_abs_m": _num(r.shift)}
            for r in diff.ranked
        ],
        "frame": {k: list(v) for k, v in diff.frame.items()},
        "envelope_definitions": _definitions(diff.envelope_definitions),
        "loadout_definitions": _definitions(diff.loadout_definitions),
        "definitions": _tables(diff.tables),
        "logged": [logged_entry(c) for c in logged_since(a.ledger, b.ledger)],
    }
    if a.ledger.placed or b.ledger.placed:
        out["placements"] = [
            {"id": c.id, "kind": c.kind, "file": c.file,
             "fields": {k: {"a": x, "b": y} for k, (x, y) in c.fields.items()},
             "a_mass_kg": None if c.mass[0] is None else _num(c.mass[0]),
             "b_mass_kg": None if c.mass[1] is None else _num(c.mass[1]),
             "a_cg_m": None if c.cg[0] is None else _vec(c.cg[0]),
             "b_cg_m": None if c.cg[1] is None else _vec(c.cg[1]),
             "cg_shift_m": _vec(c.cg_shift), "items_moved_with_it": c.folded}
            for c in diff.placements]
    return out


def logged_entry(c) -> dict:
    """A change-log entry of B that A's log lacks, with its reason and change request (None when not given)."""
    return {"time": c.time, "author": c.author, "action": c.action, "item": c.item, "summary": c.summary,
            "reason": c.reason, "request": c.request}
