"""The `rollup --json` record (DESIGN.md contract v1), always SI."""

from __future__ import annotations

import math

from steelyard.core.limits.rules import mac_reference
from steelyard.core.assembly.flatten import placed_totals
from steelyard.core.loading.loadout import State, resolve
from steelyard.core.document.model import Ledger
from steelyard.core.physics.rollup import MassProperties, check_finite_rollup, rollup_state
from steelyard.core.limits.status import envelope_results


def _num(x: float) -> float | None:
    x = float(x)
    return x if math.isfinite(x) else None


def _vec(v) -> list:
    return [_num(x) for x in v]


def _mat(m) -> list:
    return [_vec(row) for row in m]


def rollup_record(ledger: Ledger, loadout: str | None = None) -> dict:
    state = resolve(ledger, loadout)
    return record_from(ledger, rollup_state(state), loadout, state)


def assemblies_record(ledger: Ledger, state: State) -> list[dict]:
    """`assemblies` (contract v1.1): each placement's mass and CG as loaded, parent frame, SI."""
    out = []
    for p in ledger.placed:
        mass, cg = placed_totals(p, state.mass, state.cg)
        out.append({"id": p.id, "file": p.file, "mass_kg": _num(mass), "cg_m": _vec(cg)})
    return out


def record_from(ledger: Ledger, mp: MassProperties, loadout: str | None, state: State | None = None) -> dict:
    """The record of roll-up `mp` of `ledger`; a roll-up beyond a float is refused, naming the item.

    `state` is the loaded state `mp` rolls up (made again when not given and the ledger has assemblies).
    """
    check_finite_rollup(mp, ledger)
    zero = mp.mass <= 0
    moments, axes = (None, None) if zero else mp.principal
    mac = mac_reference(ledger)
    record = {
        "loadout": loadout,
        "mass_kg": _num(mp.mass),
        "cg_m": _vec(mp.cg),
        "inertia_cg_kg_m2": _mat(mp.inertia_cg),
        "principal_kg_m2": None if zero else _vec(moments),
        "principal_axes": None if zero else _mat(axes),
        "envelopes": [
            {"name": r.name, "axis": r.axis, "inside": r.inside,
             "limits_m": None if r.limits is None else [r.lo, r.hi],
             "margin_m": r.margin,
             # added keys (the contract allows additions): the room on each side, and in mass
             "margin_lo_m": r.margin_lo, "margin_hi_m": r.margin_hi, "mass_margin_kg": r.mass_margin}
            for r in envelope_results(ledger, mp)
        ],
    }
    if mac is not None and not zero:
        record["cg_percent_mac"] = _num(mac.percent(float(mp.cg[0])))
    if ledger.placed:
        record["assemblies"] = assemblies_record(ledger, state if state is not None else resolve(ledger, loadout))
    return record
