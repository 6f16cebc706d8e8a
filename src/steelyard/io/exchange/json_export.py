"""`steelyard export --json`: the ledger's items in SI with the roll-up records.

For scripts that would rather not read TOML or convert units: every number
is SI (kg, m, kg·m², kg/m³) whatever the file's units, the roll-up of the
vehicle with variable items empty and of every loadout uses the
`rollup --json` record (DESIGN.md contract v1), and the growth, allocation
and uncertainty figures come from the same function as the terminal tables.
"""

from __future__ import annotations

import math

import numpy as np

from steelyard.core.control.growth import growth_fractions
from steelyard.core.loading.loadout import resolve
from steelyard.core.document.model import more_keys, Ledger
from steelyard.io.report.control import tolerance_si
from steelyard.io.report.control import DEFAULT_SAMPLES, DEFAULT_SEED, control_record, has_growth
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


def items_record(ledger: Ledger) -> list[dict]:
    a = ledger.arrays
    own = a.own.tolist()
    cg = a.cg.tolist()
    fractions = growth_fractions(ledger) if has_growth(ledger) else np.zeros(len(ledger.items))
    out = []
    for i, it in enumerate(ledger.items):
        row = {"id": it.id, "name": it.name or it.id, "group": it.group, "mass_kg": it.mass,
               "quantity": it.quantity, "cg_m": cg[i], "variable": it.variable,
               "inertia_kg_m2": own[i] if (it.inertia is not None or it.shape is not None) else None,
               "density_kg_m3": it.density}
        extra = more_keys(it)
        if "maturity" in extra:
            row["maturity"] = extra["maturity"]
        if "maturity" in extra or "growth" in extra:
            row["growth_fraction"] = float(fractions[i])
        if "tolerance" in extra:
            kind, mass, tol_cg = tolerance_si(it, ledger.units)
            row["tolerance"] = {"kind": kind, "mass_kg": mass, "cg_m": tol_cg}
        rest = {k: v for k, v in extra.items() if k not in ("maturity", "growth", "tolerance")}
        if rest:
            row["other"] = rest
        out.append(row)
    return out


def export_record(ledger: Ledger, *, source: str | None = None, samples: int = DEFAULT_SAMPLES,
                  seed: int = DEFAULT_SEED) -> dict:
    f = ledger.frame
    out = {
        "format": FORMAT, "version": VERSION, "source": source, "convention": CONVENTION,
        "frame": {"x": f.x, "y": f.y, "z": f.z},
        "items": items_record(ledger),
        "rollup": rollup_record(ledger, None),
        "loadouts": [rollup_record(ledger, lo.name) for lo in ledger.loadouts],
    }
    # Denormal masses (5e-324 kg) overflow the uncertainty figures' divisions (core.control.uncertainty);
    # such a figure becomes null below (`_num`) instead of a RuntimeWarning on the user's terminal.
    with np.errstate(over="ignore", invalid="ignore", divide="ignore", under="ignore"):
        control = control_record(ledger, resolve(ledger, None), samples=samples, seed=seed)
    if control:
        out["control"] = control
    return out


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


def export_json(ledger: Ledger, **kw) -> str:
    import json

    return json.dumps(_plain(export_record(ledger, **kw)), indent=2, allow_nan=False, ensure_ascii=False) + "\n"
