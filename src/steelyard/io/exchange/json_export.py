"""`steelyard export --json`: the ledger's items in SI with the roll-up records.

For scripts that would rather not read TOML or convert units: every number
is SI (kg, m, kg·m², kg/m³) whatever the file's units, the roll-up of the
vehicle with variable items empty and of every loadout uses the
`rollup --json` record (DESIGN.md contract v1), and the growth, allocation
and uncertainty figures come from the same function as the terminal tables.
"""

from __future__ import annotations

import math
from collections.abc import Iterator
from itertools import chain
from operator import attrgetter

import numpy as np

from steelyard.core.control.growth import growth_fractions
from steelyard.core.loading.loadout import resolve
from steelyard.core.document.model import ITEM_MORE, Ledger, more_keys, more_rows
from steelyard.io.report.control import tolerance_si
from steelyard.io.report.control import DEFAULT_SAMPLES, DEFAULT_SEED, control_record, has_growth
from steelyard.io.exchange.item_columns import all_of_type, field
from steelyard.io.exchange.json_items import item_blocks
from steelyard.io.exchange.rollup_json import rollup_record

FORMAT = "steelyard-export"
VERSION = 1
CONVENTION = ("SI units (kg, m, kg*m**2, kg/m**3). mass_kg is per unit (a row holds quantity units; "
              "for a variable item, its full amount). inertia_kg_m2 is one unit's own inertia tensor "
              "about its own CG in body axes: off-diagonal terms are minus the products of inertia "
              "(products are the integrals xy = ∫x·y dm).")


def _num(x) -> float | None:
    x = float(x)
    return x if math.isfinite(x) else None


_MORE = attrgetter(*ITEM_MORE)
#: what an item without any key beyond v1 holds in them (`removable` may be False or None)
_NONE = (tuple(None for _ in ITEM_MORE), tuple(False if k == "removable" else None for k in ITEM_MORE))


def item_record(ledger: Ledger, i: int, has_own: bool, own: list | None, cg: list, fraction: float) -> dict:
    """Item i of the export record: its fields in SI and the keys beyond v1 it gives."""
    it = ledger.items[i]
    row = {"id": it.id, "name": it.name or it.id, "group": it.group, "mass_kg": it.mass,
           "quantity": it.quantity, "cg_m": cg, "variable": it.variable,
           "inertia_kg_m2": own if has_own else None, "density_kg_m3": it.density}
    extra = {} if _MORE(it) in _NONE else more_keys(it)  # most items: one comparison
    if "maturity" in extra:
        row["maturity"] = extra["maturity"]
    if "maturity" in extra or "growth" in extra:
        row["growth_fraction"] = float(fraction)
    if "tolerance" in extra:
        kind, mass, tol_cg = tolerance_si(it, ledger.units)
        row["tolerance"] = {"kind": kind, "mass_kg": mass, "cg_m": tol_cg}
    rest = {k: v for k, v in extra.items() if k not in ("maturity", "growth", "tolerance")}
    if rest:
        row["other"] = rest
    return row


def items_record(ledger: Ledger) -> list[dict]:
    """Every item's record (the slow path: a record whose variables are not all bools)."""
    a = ledger.arrays
    own = a.own.tolist()
    cg = a.cg.tolist()
    fractions = growth_fractions(ledger) if has_growth(ledger) else np.zeros(len(ledger.items))
    return [item_record(ledger, i, it.inertia is not None or it.shape is not None, own[i], cg[i], fractions[i])
            for i, it in enumerate(ledger.items)]


def export_record(ledger: Ledger, *, source: str | None = None, samples: int = DEFAULT_SAMPLES,
                  seed: int = DEFAULT_SEED, items: object = None, control: bool = True) -> dict:
    """The whole record; `items` stands in for the item list when given (it is written apart).
    `control=False`: the caller knows the ledger has nothing `control_record` reports."""
    f = ledger.frame
    out = {
        "format": FORMAT, "version": VERSION, "source": source, "convention": CONVENTION,
        "frame": {"x": f.x, "y": f.y, "z": f.z},
        "items": items_record(ledger) if items is None else items,
        "rollup": rollup_record(ledger, None),
        "loadouts": [rollup_record(ledger, lo.name) for lo in ledger.loadouts],
    }
    # Denormal masses (5e-324 kg) overflow the uncertainty figures' divisions (core.control.uncertainty);
    # such a figure becomes null below (`_num`) instead of a RuntimeWarning on the user's terminal.
    if not control:
        return out
    with np.errstate(over="ignore", invalid="ignore", divide="ignore", under="ignore"):
        control = control_record(ledger, resolve(ledger, None), samples=samples, seed=seed)
    if control:
        out["control"] = control
    return out


def _no_control(ledger: Ledger, more: list[int]) -> bool:
    """True when `control_record` has nothing to report: no [growth] table, no [[allocation]], and no
    item with a maturity, growth or tolerance (only the `more` rows, the items with keys beyond v1,
    can have one). Spares its three passes over every item (has_growth twice, has_tolerances)."""
    items = ledger.items
    return (ledger.growth is None and not ledger.allocations
            and all(items[i].maturity is None and items[i].growth is None and items[i].tolerance is None
                    for i in more))


def _plain(v):
    """TOML values kept in `other` (dates, times) as JSON-ready text."""
    if isinstance(v, dict):
        return {k: _plain(x) for k, x in v.items()}
    if isinstance(v, (list, tuple)):
        return [_plain(x) for x in v]
    if isinstance(v, float):
        return _num(v)
    if isinstance(v, (str, int, bool)) or v is None:
        return v
    return str(v)


_STANDARD = ("id", "name", "group", "mass_kg", "quantity", "cg_m", "variable", "inertia_kg_m2", "density_kg_m3")
_SENTINEL = "\x00items\x00"  # stands for the item list while the rest is encoded (no item text holds a NUL)


def _float(x) -> str | None:
    """JSON text of a finite float as json.dumps writes it (float.__repr__); None for anything else."""
    return float.__repr__(x) if type(x) is float and math.isfinite(x) else None


def _item_text(row: dict, string) -> str | None:
    """One item as json.dumps(indent=2) writes it inside the list (level 2); None unless the row is
    plain (the standard keys, Python floats, all finite), when json itself writes it."""
    if len(row) != len(_STANDARD):
        return None
    ident, name, group = row["id"], row["name"], row["group"]
    mass, qty, cg, own, density = row["mass_kg"], row["quantity"], row["cg_m"], row["inertia_kg_m2"], \
        row["density_kg_m3"]
    if not (type(ident) is str and type(name) is str and type(group) is str and type(qty) is int):
        return None
    m = _float(mass)
    xyz = [_float(c) for c in cg] if type(cg) is list and len(cg) == 3 else [None]
    if m is None or None in xyz:
        return None
    if density is None:
        d = "null"
    else:
        d = _float(density)
        if d is None:
            return None
    if own is None:
        inertia = "null"
    else:
        rows = [[_float(v) for v in r] for r in own]
        if any(None in r or len(r) != 3 for r in rows) or len(rows) != 3:
            return None
        inertia = "[\n" + ",\n".join("        [\n" + ",\n".join("          " + v for v in r) + "\n        ]"
                                     for r in rows) + "\n      ]"
    return ("    {\n"
            f'      "id": {string(ident)},\n'
            f'      "name": {string(name)},\n'
            f'      "group": {string(group)},\n'
            f'      "mass_kg": {m},\n'
            f'      "quantity": {int.__repr__(qty)},\n'
            f'      "cg_m": [\n        {xyz[0]},\n        {xyz[1]},\n        {xyz[2]}\n      ],\n'
            f'      "variable": {"true" if row["variable"] is True else "false"},\n'
            f'      "inertia_kg_m2": {inertia},\n'
            f'      "density_kg_m3": {d}\n'
            "    }")


def _one_item(ledger: Ledger, i: int, has_own: bool, own: list | None, cg: list, fraction: float) -> str:
    """Item i as json.dumps(indent=2) writes it inside the list: `_item_text` when it can, else json."""
    import json
    from json.encoder import encode_basestring

    row = item_record(ledger, i, has_own, own, cg, fraction)
    text = _item_text(row, encode_basestring)
    if text is None:
        one = json.dumps(_plain(row), indent=2, allow_nan=False, ensure_ascii=False)
        text = "\n".join("    " + line for line in one.split("\n"))
    return text


def export_json_parts(ledger: Ledger, **kw) -> list[str] | Iterator[str]:
    """The export record as json.dumps(indent=2) writes it, in pieces whose concatenation is that text
    (the caller may encode each as it comes: no copy of the whole). The item list, most of the text,
    is written a block of rows at a time (json_items: the same characters, a fraction of the time of
    json's indenting encoder, which is pure Python); the rest of the record goes through json.
    Every check runs before this returns: the pieces still to come are only formatted."""
    import json

    items = ledger.items
    variable = field(items, "variable")
    if not items or not all_of_type(variable, bool):
        return [json.dumps(_plain(export_record(ledger, **kw)), indent=2, allow_nan=False, ensure_ascii=False) + "\n"]
    more = more_rows(ledger)
    listed = item_blocks(ledger, variable, more, lambda *row: _one_item(ledger, *row))  # first: a bad key stops here
    record = export_record(ledger, items=_SENTINEL, control=not _no_control(ledger, more), **kw)
    head = json.dumps(_plain(record), indent=2, allow_nan=False, ensure_ascii=False)
    token = '"items": ' + json.dumps(_SENTINEL, ensure_ascii=False)
    before, found, after = head.partition(token)
    assert found and token not in after, "the item list's place holder must appear once"
    return chain((before + '"items": ',), listed, (after + "\n",))


def export_json(ledger: Ledger, **kw) -> str:
    """The export record as json.dumps(indent=2) writes it (`export_json_parts` joined)."""
    return "".join(export_json_parts(ledger, **kw))
