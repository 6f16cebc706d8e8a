"""A ledger's `[weighing]` table reduced, with the comparison against the empty-vehicle item.

Shared by `steelyard weigh`, the report and the TUI weighing form: the form
can build its table (same keys as the file) and call `weigh_table`, then
`weighed_ledger` to replace the item and `weighing_summary` for the change
log. Pure (core only); SI throughout.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from steelyard.core.display import AXIS_NAMES
from steelyard.core.numbers import number
from steelyard.core.errors import SteelyardError
from steelyard.core.document.model import Item, Ledger
from steelyard.core.units import from_si, unit_factor
from steelyard.core.control.weighing import WeighingInputs, WeighingResult, parse_weighing, replaced_item


def _num(x) -> float | None:
    x = float(x)
    return x if math.isfinite(x) else None


def _vec(v) -> list:
    return [_num(x) for x in v]


def _n(x: float, dimension: str, unit: str) -> str:
    """A lone value in `unit` by the one number rule (docs/numbers.md)."""
    return number(x, dimension, unit_factor(unit, dimension))


@dataclass(frozen=True)
class Weighing:
    inputs: WeighingInputs
    result: WeighingResult
    old: Item | None  # the item the weighing replaces, as it is in the ledger
    new: Item | None  # that item with the weighed empty mass and CG

    @property
    def replaces(self) -> str | None:
        return self.inputs.replaces


def weigh_table(ledger: Ledger, table: Mapping, *, source: str | None = None) -> Weighing:
    """Reduce a weighing table (the `[weighing]` keys, bare numbers in the ledger's units)."""
    try:
        inputs = parse_weighing(table, ledger.units, ledger)
        result = inputs.reduce()
        old = new = None
        if inputs.replaces is not None:
            old = ledger.item(inputs.replaces)
            new = replaced_item(ledger, inputs, result)
    except SteelyardError as exc:
        raise exc.located(file=source)
    return Weighing(inputs, result, old, new)


def weigh_ledger(ledger: Ledger, *, source: str | None = None) -> Weighing:
    table = ledger.weighing
    if table is None:
        raise SteelyardError("no [weighing] table (see docs/control.md, Weighing)", file=source,
                             subject="weighing")
    return weigh_table(ledger, table, source=source)


def weighed_ledger(ledger: Ledger, w: Weighing) -> Ledger:
    """The ledger with the empty-vehicle item replaced by the weighed one."""
    if w.new is None:
        raise SteelyardError("names no item to replace; add replaces = \"<item id>\"",
                             subject="weighing", field="replaces")
    return ledger.with_item(w.new)


def _adjustments(entries) -> list[dict]:
    return [{"name": a.name, "item": a.item, "mass_kg": _num(a.mass), "at_m": _vec(a.at)} for a in entries]


def weighing_record(w: Weighing) -> dict:
    """The reduction as a JSON-ready SI record (NaN, an undetermined coordinate, is null)."""
    i, r = w.inputs, w.result
    out = {
        "points": [{"name": n, "at_m": _vec(i.support_xyz[k]), "reading_kg": _num(i.readings[k]),
                    "tare_kg": _num(i.tares[k]), "net_kg": _num(r.net[k])} for k, n in enumerate(i.names)],
        "weighed_mass_kg": _num(r.weighed_mass),
        "weighed_cg_m": _vec(r.weighed_cg),
        "on_board": _adjustments(i.on_board),
        "missing": _adjustments(i.missing),
        "empty_mass_kg": _num(r.empty_mass),
        "empty_cg_m": _vec(r.empty_cg),
        "vertical_axis": AXIS_NAMES[i.vertical_axis],
        "replaces": i.replaces,
        "comparison": None,
    }
    if w.old is not None and w.new is not None:
        old_mass = w.old.mass * w.old.quantity
        old_cg, new_cg = np.asarray(w.old.cg, dtype=float), np.asarray(w.new.cg, dtype=float)
        out["comparison"] = {"item": w.old.id, "old_mass_kg": _num(old_mass), "old_cg_m": _vec(old_cg),
                             "new_mass_kg": _num(w.new.mass), "new_cg_m": _vec(new_cg),
                             "delta_mass_kg": _num(w.new.mass - old_mass),
                             "delta_cg_m": _vec(new_cg - old_cg)}
    return out


def weighing_summary(ledger: Ledger, w: Weighing) -> str:
    """One line for the change log, in the ledger's own units."""
    if w.old is None or w.new is None:
        mu = ledger.units.mass
        return f"weighed: empty mass {_n(from_si(w.result.empty_mass, 'mass', mu), 'mass', mu)}"
    mu, lu = ledger.units.mass, ledger.units.length
    old_m = from_si(w.old.mass * w.old.quantity, "mass", mu)
    new_m = from_si(w.new.mass, "mass", mu)
    parts = [f"weighed {w.old.id}: mass {_n(old_m, 'mass', mu)} -> {_n(new_m, 'mass', mu)} {mu}"]
    for k in range(3):
        a, b = w.old.cg[k], w.new.cg[k]
        if a != b:
            parts.append(f"CG {AXIS_NAMES[k]} {_n(from_si(a, 'length', lu), 'length', lu)} -> "
                         f"{_n(from_si(b, 'length', lu), 'length', lu)} {lu}")
    return ", ".join(parts)
