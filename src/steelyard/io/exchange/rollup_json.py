"""The `rollup --json` record (DESIGN.md contract v1), always SI."""

from __future__ import annotations

import math

from steelyard.core.limits.rules import mac_reference
from steelyard.core.loading.loadout import resolve
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
    mp = rollup_state(resolve(ledger, loadout))
    return record_from(ledger, mp, loadout)


def record_from(ledger: Ledger, mp: MassProperties, loadout: str | None) -> dict:
    """The record of roll-up `mp` of `ledger`; a roll-up beyond a float is refused, naming the item."""
    check_finite_rollup(mp, ledger.items)
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
    return record
