"""The trade's weight-and-balance solvers: shift, add, ballast, payload remaining.

Formulas are the FAA handbooks' (FAA-H-8083-1, -25, -30 ch. 4), in a form
that works from the old CG and the change, so no large moments are summed.
SI floats in and out (kg, m). A question with no answer (ballast at the limit
station itself, mass moved the wrong way) raises SteelyardError saying why; a
caller that knows the ledger passes its `units`, so the message names masses
and stations in the units the user wrote (kg and m otherwise).

Adding mass w at station s moves the state along a curve in the envelope
plane: mass = W + w, cg = cg₀ + w(s − cg₀)/(W + w), a hyperbola
(cg − s)·mass = W(cg₀ − s). The envelope solvers sample that curve at a
grid plus every point where it meets an envelope edge (so no thin corner is
skipped between samples), then narrow the bracket around the first change.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from steelyard.core.document.model import FileUnits
from steelyard.core.errors import SteelyardError, said
from steelyard.core.limits.envelope import EnvelopeGeometry, as_geometry
from steelyard.core.quadratic import quadratic_roots
from steelyard.core.units import from_si

_GRID = 257  # uniform samples along a path, on top of the edge crossings
_SECTIONS = 33  # points per narrowing step (the bracket shrinks 32× a step)


def _shown(value: float, dimension: str, units: FileUnits | None) -> str:
    """An SI mass or length as a plain number in the ledger's unit ("225 lb"), for a message."""
    unit = "kg" if dimension == "mass" else "m"
    if units is not None:
        unit = units.mass if dimension == "mass" else units.length
    try:
        return f"{from_si(value, dimension, unit):.6g} {unit}"
    except (SteelyardError, OverflowError, ValueError, ZeroDivisionError):  # an odd unit: SI, named as such
        return f"{value:.6g} {'kg' if dimension == 'mass' else 'm'}"


def _kg(value: float, units: FileUnits | None) -> str:
    return _shown(value, "mass", units)


def _m(value: float, units: FileUnits | None) -> str:
    return _shown(value, "length", units)


def _num(name: str, value) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise SteelyardError(f"{name} must be a number, got {said(value)}", field=name) from None
    if not math.isfinite(v):
        raise SteelyardError(f"{name} must be finite, got {v}", field=name)
    return v


def _answer(name: str, value: float) -> float:
    """An answer beyond a float is refused rather than printed as inf."""
    if not math.isfinite(value):
        raise SteelyardError(f"too large: the {name} overflows in SI units", field=name)
    return value


def _mass(value, units: FileUnits | None = None) -> float:
    w = _num("total_mass", value)
    if w <= 0:
        raise SteelyardError(f"total mass must be greater than zero, got {_kg(w, units)}", field="total_mass")
    return w


def weight_shift(total_mass, cg, target_cg, from_station, to_station, *,
                 units: FileUnits | None = None) -> float:
    """Mass [kg] to move from one station to another to bring the CG to target_cg.

    Weight moved / total weight = ΔCG / distance moved (FAA-H-8083-1).
    """
    w, x, t = _mass(total_mass, units), _num("cg", cg), _num("target_cg", target_cg)
    a, b = _num("from_station", from_station), _num("to_station", to_station)
    if a == b:
        raise SteelyardError(f"moving mass within station {_m(a, units)} cannot move the CG")
    moved = _answer("mass moved", w * (t - x) / (b - a))
    if moved < 0:
        raise SteelyardError(f"moving mass from station {_m(a, units)} to {_m(b, units)} moves the CG away "
                             f"from {_m(t, units)}; move it the other way")
    if moved > w:
        raise SteelyardError(f"reaching a CG of {_m(t, units)} needs {_kg(moved, units)} moved, more than "
                             f"the total mass {_kg(w, units)}")
    return moved


def add_mass(total_mass, cg, mass, station, *, units: FileUnits | None = None) -> tuple[float, float]:
    """(new mass [kg], new CG [m]) after adding `mass` at `station`; negative mass removes.

    ΔCG = mass changed × (station − old CG) / new total (FAA-H-8083-1).
    """
    w, x = _mass(total_mass, units), _num("cg", cg)
    dm, s = _num("mass", mass), _num("station", station)
    new = _answer("new mass", w + dm)
    if new <= 0:
        raise SteelyardError(f"removing {_kg(-dm, units)} from {_kg(w, units)} leaves no mass", field="mass")
    return new, _answer("new CG", x + dm * (s - x) / new)


def ballast_for_limit(total_mass, cg, limit, station, *, units: FileUnits | None = None) -> float:
    """Ballast [kg] at `station` that brings the CG onto `limit`.

    Ballast = W × (distance CG is out of limits) / (distance from ballast
    station to that limit) (FAA-H-8083-1), signed: W (limit − cg) / (station − limit).
    """
    w, x = _mass(total_mass, units), _num("cg", cg)
    lim, s = _num("limit", limit), _num("station", station)
    if s == lim:
        raise SteelyardError(f"ballast at the limit station {_m(lim, units)} can never bring the CG "
                             "onto that limit", field="station")
    ballast = _answer("ballast", w * (lim - x) / (s - lim))
    if ballast < 0:
        raise SteelyardError(f"ballast at station {_m(s, units)} cannot bring the CG from {_m(x, units)} "
                             f"to {_m(lim, units)}: the station must lie beyond the limit, on the far "
                             "side from the CG", field="station")
    return ballast


# --------------------------------------------------------------------------- along a path


def _path(w: float, x: float, s: float, b: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(cg, mass) after adding b at station s to (w, x)."""
    with np.errstate(over="ignore", invalid="ignore"):
        return x + b * (s - x) / (w + b), w + b


def _edge_crossings(g: EnvelopeGeometry, w: float, x: float, s: float) -> np.ndarray:
    """Added masses at which the path meets an edge or a vertex level of g (unfiltered).

    A point (x0 + u dx, y0 + u dy) of an edge is on the path when
    (x0 + u dx − s)(y0 + u dy) = w (x − s): a quadratic in u.
    """
    x0, y0 = g.vertices[:, 0], g.vertices[:, 1]
    dx, dy = np.roll(x0, -1) - x0, np.roll(y0, -1) - y0
    e = x0 - s
    qa, qb, qc = dx * dy, e * dy + dx * y0, e * y0 - w * (x - s)
    u = np.concatenate(quadratic_roots(qa, qb, qc))
    y = np.concatenate([y0, y0]) + u * np.concatenate([dy, dy])
    on = np.isfinite(u) & (u >= -1e-9) & (u <= 1 + 1e-9)
    return np.concatenate([y[on], y0]) - w


def _samples(crossings: np.ndarray, cap: float) -> np.ndarray:
    grid = np.linspace(0.0, cap, _GRID)
    c = crossings[(crossings > 0) & (crossings < cap)]
    pts = np.unique(np.concatenate([grid, c]))
    return np.sort(np.concatenate([pts, 0.5 * (pts[1:] + pts[:-1])]))


def _narrow(pred, lo: float, hi: float, start: bool, tol: float) -> tuple[float, float]:
    """Shrink [lo, hi] (pred(lo) is `start`, pred(hi) is not) around the first change."""
    for _ in range(20):
        if hi - lo <= tol:
            break
        b = np.linspace(lo, hi, _SECTIONS)
        v = pred(b)
        v[0], v[-1] = start, not start
        g = int(np.argmax(v != start))
        lo, hi = b[g - 1], b[g]
    return lo, hi


def ballast_to_enter(points, total_mass, cg, station, *, units: FileUnits | None = None) -> float:
    """Smallest ballast [kg] at `station` that brings (mass, cg) inside the envelope.

    The mass rises with the ballast, so this is the first point where the
    path above meets the polygon (boundary included). 0 when already inside.
    """
    g = as_geometry(points)
    w, x, s = _mass(total_mass, units), _num("cg", cg), _num("station", station)
    exact = g.without_tolerance()

    def inside(b: np.ndarray, geom: EnvelopeGeometry = g) -> np.ndarray:
        return geom.evaluate(*_path(w, x, s, b)).inside

    if inside(np.zeros(1))[0]:
        return 0.0
    top = g.mass_range[1]
    cap = top + g.tol_mass - w
    if cap < 0:
        raise SteelyardError(f"the mass {_kg(w, units)} is already above the envelope's maximum "
                             f"{_kg(top, units)}; ballast cannot bring it inside", field="station")
    b = _samples(_edge_crossings(g, w, x, s), cap)
    geom = exact
    v = inside(b, exact)
    if not v.any():  # only grazing contact, lost to rounding without the tolerance
        geom, v = g, inside(b)
    if not v.any():
        raise SteelyardError(f"no amount of ballast at station {_m(s, units)} brings the loading "
                             "inside the envelope", field="station")
    f = int(np.argmax(v))
    _, hi = _narrow(lambda t: inside(t, geom), b[f - 1], b[f], False, 1e-13 * (w + cap))
    return _answer("ballast", float(hi))


def _per_envelope(name: str, value, n: int) -> np.ndarray:
    try:
        arr = np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise SteelyardError(f"{name} must be a number or one number per envelope", field=name) from None
    if arr.ndim == 0:
        arr = np.full(n, float(arr))
    if arr.shape != (n,):
        raise SteelyardError(f"{name} must be one number or one per envelope ({n})", field=name)
    if not np.isfinite(arr).all():
        raise SteelyardError(f"{name} must be finite", field=name)
    return arr


def payload_remaining(points_list: Sequence, max_mass, total_mass, cg, station, *,
                      units: FileUnits | None = None) -> float:
    """Mass [kg] that can still be added at `station` before any envelope (or max_mass) is left.

    `cg` and `station` are the coordinates on each envelope's own axis: one
    number for all, or one per envelope. 0 when the loading is already
    outside an envelope or at the maximum mass.
    """
    geoms = [as_geometry(p) for p in points_list]
    w = _mass(total_mass, units)
    if not geoms and max_mass is None:
        raise SteelyardError("payload remaining needs an envelope or a maximum mass")
    cap = math.inf
    if max_mass is not None:
        mm = _num("max_mass", max_mass)
        if mm <= 0:
            raise SteelyardError(f"maximum mass must be greater than zero, got {_kg(mm, units)}",
                                 field="max_mass")
        cap = mm - w
    xs = _per_envelope("cg", cg, len(geoms))
    ss = _per_envelope("station", station, len(geoms))
    for g in geoms:
        cap = min(cap, g.mass_range[1] - w)

    def inside(b: np.ndarray, exact: bool = False) -> np.ndarray:
        ok = np.ones(len(b), bool)
        for g, x, s in zip(geoms, xs, ss):
            ok &= (g.without_tolerance() if exact else g).evaluate(*_path(w, x, s, b)).inside
        return ok

    if not inside(np.zeros(1))[0] or cap <= 0:
        return 0.0
    cross = np.concatenate([np.empty(0)] + [_edge_crossings(g, w, x, s)
                                            for g, x, s in zip(geoms, xs, ss)])
    b = _samples(cross, cap)
    v = inside(b, exact=True)
    v[0] = True  # inside within the boundary tolerance, checked above
    if v.all():
        return float(cap)
    f = int(np.argmin(v))
    lo, _ = _narrow(lambda t: inside(t, exact=True), b[f - 1], b[f], True, 1e-13 * (w + cap))
    return float(lo)
