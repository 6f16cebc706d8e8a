"""Mass-properties control figures of one loading state, as a plain SI record.

One function gathers what the control tables, the JSON export and the report
show: basic vs predicted mass and CG (growth allowance), group allocations
with their margins, and, when items carry tolerances, the linear sigma, the
worst-case bounds and the Monte Carlo probability of being outside each
envelope. Keeping it in one place means the terminal, the JSON and the report
can never disagree. Pure (core only); nothing here prints or touches a file.
"""

from __future__ import annotations

import math

from itertools import repeat
from operator import attrgetter, is_

import numpy as np

from steelyard.core.limits.envelope import as_geometry
from steelyard.core.physics.groups import prefixes
from steelyard.core.control.growth import allocation_margins, basic_and_predicted, growth_fractions
from steelyard.core.loading.loadout import State
from steelyard.core.errors import SteelyardError
from steelyard.core.document.model import FileUnits, Item, Ledger
from steelyard.core.limits.status import AXIS_INDEX
from steelyard.core.units import parse_quantity, to_si
from steelyard.core.control.uncertainty import (monte_carlo, parse_tolerances, probability_outside, propagate,
                                tolerance_kinds, worst_case)

DEFAULT_SAMPLES = 20_000
DEFAULT_SEED = 0


def _num(x) -> float | None:
    x = float(x)
    return x if math.isfinite(x) else None


def _vec(v) -> list:
    return [_num(x) for x in v]


def tolerance_si(item: Item, units: FileUnits) -> tuple[str, float | None, list | None]:
    """(kind, mass per unit, [x, y, z]) of an item's tolerance as written, SI; "5 %" made absolute."""
    tol = item.tolerance
    subject = f"item {item.id!r}"
    if not isinstance(tol, dict) or tol.get("kind") not in ("sigma", "bound"):
        raise SteelyardError("tolerance needs kind = \"sigma\" or \"bound\"", subject=subject,
                             field="tolerance")
    mass = None
    if "mass" in tol:
        raw = tol["mass"]
        if isinstance(raw, str) and raw.strip().endswith("%"):
            mass = float(raw.strip()[:-1]) / 100.0 * item.mass
        else:
            mass = to_si(raw, "mass", units.mass)
    cg = None
    if "cg" in tol:
        raw = tol["cg"] if isinstance(tol["cg"], list) else [tol["cg"]] * 3
        cg = [to_si(v, "length", units.length) for v in raw]
    return tol["kind"], mass, cg


def growth_value(raw: object) -> float:
    """An item's explicit `growth` (0.12 or \"12 %\") as a fraction."""
    return parse_quantity(raw, "dimensionless") if isinstance(raw, str) else float(raw)


def _any_given(items, name: str) -> bool:
    """True when some item's `name` is not None (a C-level pass: a roll-up asks this of every item)."""
    return not all(map(is_, repeat(None), map(attrgetter(name), items)))


def has_growth(ledger: Ledger) -> bool:
    """True when the ledger says anything about growth (a [growth] table or an item key)."""
    if ledger.growth is not None:
        return True
    return _any_given(ledger.items, "maturity") or _any_given(ledger.items, "growth")


def has_tolerances(ledger: Ledger) -> bool:
    return _any_given(ledger.items, "tolerance")


def _block(basic, basic_cg, predicted, predicted_cg) -> dict:
    growth = predicted - basic
    return {"basic_mass_kg": _num(basic), "basic_cg_m": _vec(basic_cg),
            "growth_kg": _num(growth),
            "growth_fraction": _num(growth / basic) if basic > 0 else None,
            "predicted_mass_kg": _num(predicted), "predicted_cg_m": _vec(predicted_cg)}


def growth_record(ledger: Ledger, state: State, fractions: np.ndarray | None = None) -> dict:
    """Basic vs predicted for the whole vehicle and each top-level group (rows as carried)."""
    f = growth_fractions(ledger) if fractions is None else fractions
    out = {"total": _block(*basic_and_predicted(state.mass, state.cg, f)), "groups": []}
    codes: dict[str, int] = {}
    top = np.fromiter((codes.setdefault(prefixes(it.group)[0], len(codes)) for it in ledger.items),
                      np.intp, len(ledger.items))
    for name, code in codes.items():  # a handful of top-level groups
        rows = top == code
        block = _block(*basic_and_predicted(state.mass[rows], state.cg[rows], f[rows]))
        out["groups"].append({"group": name, "items": int(rows.sum()), **block})
    return out


def _on_board_tolerances(ledger: Ledger, state: State):
    """Tolerances per row; a row not on board (zero mass) carries none."""
    ms, rs, mb, rb = parse_tolerances(ledger)
    off = ~(state.mass > 0)
    for a in (ms, mb):
        a[off] = 0.0
    for a in (rs, rb):
        a[off] = 0.0
    return ms, rs, mb, rb


def uncertainty_record(ledger: Ledger, state: State, *, samples: int = DEFAULT_SAMPLES,
                       seed: int = DEFAULT_SEED) -> dict | None:
    """Linear sigma, worst case and Monte Carlo outside-probabilities; None with no mass."""
    if not float(state.mass.sum()) > 0:
        return None
    ms, rs, mb, rb = _on_board_tolerances(ledger, state)
    spread = propagate(state.mass, state.cg, ms, rs)
    worst = worst_case(state.mass, state.cg, mb, rb)
    out = {"sigma_mass_kg": _num(spread.mass), "sigma_cg_m": _vec(spread.cg),
           "covariance": [_vec(r) for r in spread.covariance],
           "worst_mass_kg": _num(worst.mass), "worst_cg_m": _vec(worst.cg),
           "monte_carlo": None}
    if ledger.envelopes and samples > 0:
        mass_s, cg_s = monte_carlo(state.mass, state.cg, ms, rs, samples=samples, seed=seed,
                                   kind=np.where(tolerance_kinds(ledger) == "bound", "bound", "sigma"))
        envs = []
        for env in ledger.envelopes:
            geometry = as_geometry(env.array)
            p, se = probability_outside(mass_s, cg_s[:, AXIS_INDEX[env.axis]],
                                        lambda c, m, g=geometry: g.evaluate(c, m).inside)
            envs.append({"name": env.name, "axis": env.axis, "p_outside": p, "std_error": se})
        out["monte_carlo"] = {"samples": samples, "seed": seed, "envelopes": envs}
    return out


def control_record(ledger: Ledger, state: State, *, samples: int = DEFAULT_SAMPLES,
                   seed: int = DEFAULT_SEED) -> dict:
    """Growth, allocations and uncertainty of `state` (SI); {} when the ledger has none of them.

    Keys present only when the ledger uses them: "growth" ({total, groups}),
    "allocations" (list from core.growth.allocation_margins, rows as carried),
    "uncertainty" (see `uncertainty_record`).
    """
    out: dict = {}
    fractions = None
    grows = has_growth(ledger)
    if grows or ledger.allocations:
        fractions = growth_fractions(ledger)
    if grows:
        out["growth"] = growth_record(ledger, state, fractions)
    if ledger.allocations:
        out["allocations"] = allocation_margins(ledger, state.mass, fractions)
    if has_tolerances(ledger):
        out["uncertainty"] = uncertainty_record(ledger, state, samples=samples, seed=seed)
    if out:
        out = {"loadout": state.name, **out}
    return out


def uncertainty_region(covariance, cg: float, mass: float, axis: str, k: float = 2.0,
                       points: int = 72) -> np.ndarray:
    """The k-sigma ellipse of (CG on `axis`, mass) as (points, 2) rows [cg, mass], SI.

    From the 4x4 covariance of [mass, x, y, z] (`uncertainty_record` or
    core.uncertainty.propagate). Under the normal approximation the k-sigma
    ellipse of two jointly normal variables holds 1 - exp(-k^2/2) of the
    probability (86.5 % for k = 2). For the TUI chart and the report chart.
    """
    cov = np.asarray(covariance, dtype=float)
    j = 1 + AXIS_INDEX[axis]
    sub = cov[np.ix_([j, 0], [j, 0])]
    if not (np.isfinite(sub).all() and np.isfinite([cg, mass]).all()):
        return np.full((points, 2), np.nan)  # no region to draw (charts skip non-finite rows)
    peak = float(np.abs(sub).max())
    shift = 2 * (math.frexp(peak)[1] // 2) if peak > 0 else 0  # even: its square root is exact
    sub = np.ldexp(sub, -shift)  # power-of-two scaling is exact; entries near the float limit do not overflow
    values, vectors = np.linalg.eigh(0.5 * (sub + sub.T))
    t = np.linspace(0.0, 2.0 * np.pi, points)
    circle = np.stack([np.cos(t), np.sin(t)])
    with np.errstate(over="ignore", invalid="ignore"):
        scale = vectors * np.ldexp(np.sqrt(np.clip(values, 0.0, None)), shift // 2)
        return np.array([cg, mass]) + k * (scale @ circle).T
