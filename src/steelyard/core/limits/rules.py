"""What the ledger says a loading must respect, read from the keys beyond the v1 contract.

- ``[mac]``: ``lemac`` (station of the MAC's leading edge) and ``length``
  (the MAC), so CGs can be shown in %MAC and envelopes written in %MAC.
- ``[fuel]``: ``groups`` and/or ``items`` naming the variable items that are
  fuel; emptying them gives a loadout's zero-fuel state.
- on an ``[[envelope]]``: ``units = "%mac"`` (its CG values are %MAC) and
  ``conditions`` / ``loadouts`` / ``sequences`` (which states it limits).
- ``[[limit]]``: a mass range (``max_mass``, ``min_mass``), bounds on the
  inertia about the combined CG (``max_inertia``, ``min_inertia``: tables of
  xx yy zz xy xz yz), or a maximum CG offset from a line parallel to a body
  axis (``max_cg_offset``, ``axis``, ``through``), each scoped the same way.

Everything is read once per ledger, converted to SI, validated with errors
that name the table and the key, and kept with the (immutable) ledger.
Evaluation is vectorised over any number of states. docs/limits.md is the
user's description.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np

from steelyard.core.document import schema
from steelyard.core.document.named_tables import entry_name, refuse_duplicate_names
from steelyard.core.errors import SteelyardError, said
from steelyard.core.physics.inertia import COMPONENTS
from steelyard.core.limits.mac import percent_mac, station_from_percent_mac
from steelyard.core.document.model import Envelope, Ledger
from steelyard.core.units import field_to_si, to_si

#: condition words ``conditions`` may name; "zero-fuel" states are derived from loadouts
CONDITION_WORDS = ("ramp", "takeoff", "landing", "zero-fuel")
#: a value within this fraction of its bound counts as on it (rounding of lb/in sums)
REL_TOL = 1e-9

_LIMIT_KEYS = set(schema.LIMIT)  # the format's one list (core.document.schema)
_AXES = ("x", "y", "z")



def _cached(ledger: Ledger, key: str, build):
    """Ledgers are immutable and edits make new ones, so a parse can live on the ledger."""
    value = ledger.__dict__.get(key)
    if value is None:
        value = build()
        ledger.__dict__[key] = value
    return value


def _si(value, dimension: str, unit: str, subject: str, field: str) -> float:
    return field_to_si(value, dimension, unit, subject=subject, field=field)


def _strict_table(raw, subject: str, keys: set[str]) -> dict:
    if type(raw) is not dict:
        raise SteelyardError("must be a table", subject=subject)
    unknown = sorted(set(raw) - keys)
    if unknown:
        raise schema.unknown_key(unknown[0], keys, subject=subject)
    return raw


# --------------------------------------------------------------------------- MAC


@dataclass(frozen=True)
class MacRef:
    """The mean aerodynamic chord on the x axis (SI). %MAC runs aft from LEMAC whichever way +x points."""

    lemac: float  # station of the MAC's leading edge, m
    length: float  # MAC length, m
    sign: float  # +1 when +x points aft, -1 when it points forward

    def percent(self, x):
        return percent_mac(np.multiply(self.sign, x), self.sign * self.lemac, self.length)

    def station(self, percent):
        return np.multiply(self.sign, station_from_percent_mac(percent, self.sign * self.lemac, self.length))


def _read_mac(ledger: Ledger) -> MacRef | bool:
    raw = ledger.mac
    if raw is None:
        return False
    t = _strict_table(raw, "mac", set(schema.MAC))
    for key in ("lemac", "length"):
        if key not in t:
            raise SteelyardError("required", subject="mac", field=key)
    unit = ledger.units.length
    lemac = _si(t["lemac"], "length", unit, "mac", "lemac")
    length = _si(t["length"], "length", unit, "mac", "length")
    if not length > 0:
        raise SteelyardError(f"must be greater than zero, got {said(t['length'])}", subject="mac", field="length")
    if ledger.frame.x not in ("fwd", "aft"):
        raise SteelyardError(f"%MAC needs +x to point fwd or aft; the frame has x = {said(ledger.frame.x)}",
                             subject="mac")
    return MacRef(lemac, length, 1.0 if ledger.frame.x == "aft" else -1.0)


def mac_reference(ledger: Ledger) -> MacRef | None:
    """The ledger's MAC, or None when it defines none."""
    ref = _cached(ledger, "_mac_ref", lambda: _read_mac(ledger))
    return ref or None


# --------------------------------------------------------------------------- fuel


def _read_fuel(ledger: Ledger) -> np.ndarray:
    raw = ledger.fuel
    if raw is None:
        return np.zeros(0, dtype=np.intp)
    t = _strict_table(raw, "fuel", set(schema.FUEL))
    if not t:
        raise SteelyardError("name the fuel with groups = [...] or items = [...]", subject="fuel")
    variable = ledger.arrays.variable
    rows: set[int] = set()
    for key in ("groups", "items"):
        names = t.get(key, [])
        if type(names) is not list or not all(isinstance(x, str) and x for x in names):
            raise SteelyardError(f"must be a list of names, got {said(names)}"[:160], subject="fuel", field=key)
        for name in names:
            if key == "items":
                i = ledger.index.get(name)
                if i is None:
                    raise SteelyardError(f"names unknown item {said(name)}", subject="fuel", field=key)
                if not variable[i]:
                    raise SteelyardError(f"item {said(name)} is not variable; only a load can be emptied",
                                         subject="fuel", field=key)
                rows.add(i)
            else:
                g = name.strip("/")
                hit = [i for i, it in enumerate(ledger.items)
                       if variable[i] and (it.group == g or it.group.startswith(g + "/"))]
                if not hit:
                    raise SteelyardError(f"group {said(name)} holds no variable item", subject="fuel", field=key)
                rows.update(hit)
    return np.array(sorted(rows), dtype=np.intp)


def fuel_rows(ledger: Ledger) -> np.ndarray | None:
    """Indices of the variable items that are fuel, or None when the ledger names no fuel."""
    rows = _cached(ledger, "_fuel_rows", lambda: _read_fuel(ledger))
    return rows if len(rows) else None


def zero_fuel_fill(ledger: Ledger, fill: np.ndarray) -> np.ndarray | None:
    """The fill with the fuel emptied (fixed items in a fuel group, e.g. unusable fuel, stay)."""
    rows = fuel_rows(ledger)
    if rows is None:
        return None
    out = fill.copy()
    out[rows] = 0.0
    return out


# --------------------------------------------------------------------------- scope


def sequence_names(ledger: Ledger) -> list[str]:
    return [s["name"] for s in ledger.sequences if isinstance(s.get("name"), str)]


SCOPE_KEYS = ("conditions", "loadouts", "sequences")


def read_scope(raw, ledger: Ledger, subject: str) -> frozenset | None:
    """``conditions`` / ``loadouts`` / ``sequences``: which states a limit applies to.

    None (no key given) means every state. Otherwise a set of (kind, name)
    tags; a state is checked when it carries any of them (see `state tags`).
    """
    if isinstance(raw, Envelope):
        raw = {k: getattr(raw, k) for k in SCOPE_KEYS if getattr(raw, k) is not None}
    if not any(k in raw for k in SCOPE_KEYS):
        return None
    known = {"conditions": set(CONDITION_WORDS), "loadouts": {lo.name for lo in ledger.loadouts},
             "sequences": set(sequence_names(ledger))}
    frozen = (ledger.snapshot or {}).get("names")
    if isinstance(frozen, dict):  # a snapshot: the names its source had (io.ledger.snapshot)
        for key in ("loadouts", "sequences"):
            names = frozen.get(key, [])
            known[key] |= {x for x in names if isinstance(x, str)} if isinstance(names, list) else set()
    out = set()
    for key in SCOPE_KEYS:
        if key not in raw:
            continue
        names = raw[key]
        if isinstance(names, str):
            names = [names]
        if type(names) is not list or not names or not all(isinstance(x, str) for x in names):
            raise SteelyardError(f"must be a non-empty list of names, got {said(names)}"[:160], subject=subject,
                                 field=key)
        for name in names:
            if name not in known[key]:
                what = (f"one of {', '.join(CONDITION_WORDS)}" if key == "conditions" else
                        f"a {key[:-1]} of this file")
                raise SteelyardError(f"{said(name)} is not {what}", subject=subject, field=key)
            out.add((key[:-1], name))
    return frozenset(out)


def applies(scope: frozenset | None, tags: Iterable[str]) -> bool:
    return scope is None or not scope.isdisjoint(tags)


# --------------------------------------------------------------------------- envelopes


@dataclass(frozen=True)
class EnvelopeSpec:
    """An envelope ready to evaluate: stations in metres whatever the file wrote."""

    name: str
    axis: str
    points: tuple[tuple[float, float], ...]  # (cg m, mass kg)
    percent_mac: bool
    applies_to: frozenset | None  # None: every state; else (kind, name) tags, see read_scope

    @property
    def subject(self) -> str:
        return f"envelope {said(self.name)}"


def envelope_points(ledger: Ledger, env: Envelope) -> tuple[tuple[float, float], ...]:
    """The envelope's vertices as (station m, mass kg); a %MAC envelope is converted here."""
    units = env.units or "length"
    subject = f"envelope {said(env.name)}"
    if units in ("length", None):
        return env.points
    if units not in ("%mac", "%MAC"):
        raise SteelyardError(f"must be \"%mac\" or \"length\", got {said(units)}", subject=subject, field="units")
    if env.axis != "x":
        raise SteelyardError(f"a %MAC envelope limits the x axis, not {said(env.axis)}", subject=subject,
                             field="units")
    ref = mac_reference(ledger)
    if ref is None:
        raise SteelyardError("%MAC needs the file's [mac] table (lemac, length)", subject=subject, field="units")
    # The loader read the CG numbers as lengths in the file's unit; undo that to get the percentages.
    f = to_si(1.0, "length", ledger.units.length)
    pts = np.asarray(env.points, dtype=float)
    stations = ref.station(pts[:, 0] / f)
    return tuple(zip(map(float, stations), map(float, pts[:, 1])))


def _read_envelopes(ledger: Ledger) -> tuple[EnvelopeSpec, ...]:
    out = []
    for env in ledger.envelopes:
        subject = f"envelope {said(env.name)}"
        pts = envelope_points(ledger, env)
        out.append(EnvelopeSpec(env.name, env.axis, pts, env.units in ("%mac", "%MAC"),
                                read_scope(env, ledger, subject)))
    return tuple(out)


def envelope_specs(ledger: Ledger) -> tuple[EnvelopeSpec, ...]:
    return _cached(ledger, "_envelope_specs", lambda: _read_envelopes(ledger))


# --------------------------------------------------------------------------- other limits


@dataclass(frozen=True)
class LimitSpec:
    """One ``[[limit]]``: bounds on mass, on inertia components, or on the CG's offset from a line (SI)."""

    name: str
    kind: str  # "mass" | "inertia" | "cg-offset"
    applies_to: frozenset | None
    lo: np.ndarray  # (c,) lower bounds, NaN where none (mass: c = 1; inertia: xx yy zz xy xz yz)
    hi: np.ndarray  # (c,) upper bounds
    axis: int = 0  # cg-offset: the line runs along this body axis
    through: tuple[float, float] = (0.0, 0.0)  # cg-offset: the line's coordinates on the other two axes

    @property
    def subject(self) -> str:
        return f"limit {said(self.name)}"

    @property
    def dimension(self) -> str:
        return {"mass": "mass", "inertia": "inertia", "cg-offset": "length"}[self.kind]

    @property
    def components(self) -> tuple[str, ...]:
        return COMPONENTS if self.kind == "inertia" else (self.kind,)


def _inertia_bounds(raw, ledger: Ledger, subject: str, field: str) -> np.ndarray:
    out = np.full(6, np.nan)
    if raw is None:
        return out
    if type(raw) is not dict or not raw:
        raise SteelyardError("must be a table of components, e.g. { xx = 1200.0, zz = 2000.0 }",
                             subject=subject, field=field)
    for key, value in raw.items():
        if key not in COMPONENTS:
            raise SteelyardError(f"unknown component {said(key)} (use {', '.join(COMPONENTS)})", subject=subject,
                                 field=f"{field}.{key}")
        out[COMPONENTS.index(key)] = _si(value, "inertia", ledger.units.inertia, subject, f"{field}.{key}")
    return out


def _read_limit(raw, k: int, ledger: Ledger) -> LimitSpec:
    name, subject = entry_name(raw, "limit", k)
    _strict_table(raw, subject, _LIMIT_KEYS)
    kinds = [kind for kind, keys in (("mass", ("max_mass", "min_mass")), ("inertia", ("max_inertia", "min_inertia")),
                                     ("cg-offset", ("max_cg_offset",))) if any(x in raw for x in keys)]
    if len(kinds) != 1:
        raise SteelyardError("give one kind of limit: max_mass/min_mass, max_inertia/min_inertia, or max_cg_offset"
                             if kinds else "says nothing to check: give max_mass, min_mass, max_inertia, "
                             "min_inertia or max_cg_offset", subject=subject)
    kind = kinds[0]
    if kind != "cg-offset" and ("axis" in raw or "through" in raw):
        raise SteelyardError("axis and through belong to a max_cg_offset limit", subject=subject,
                             field="axis" if "axis" in raw else "through")
    scope = read_scope(raw, ledger, subject)
    if kind == "mass":
        u = ledger.units.mass
        lo = _si(raw["min_mass"], "mass", u, subject, "min_mass") if "min_mass" in raw else np.nan
        hi = _si(raw["max_mass"], "mass", u, subject, "max_mass") if "max_mass" in raw else np.nan
        for value, field in ((lo, "min_mass"), (hi, "max_mass")):
            if value == value and value <= 0:
                raise SteelyardError(f"must be greater than zero, got {said(raw[field])}", subject=subject, field=field)
        if lo == lo and hi == hi and lo > hi:
            raise SteelyardError("min_mass is above max_mass", subject=subject, field="min_mass")
        return LimitSpec(name, kind, scope, np.array([lo]), np.array([hi]))
    if kind == "inertia":
        lo = _inertia_bounds(raw.get("min_inertia"), ledger, subject, "min_inertia")
        hi = _inertia_bounds(raw.get("max_inertia"), ledger, subject, "max_inertia")
        crossed = np.isfinite(lo) & np.isfinite(hi) & (lo > hi)
        if crossed.any():
            c = COMPONENTS[int(np.argmax(crossed))]
            raise SteelyardError(f"min_inertia.{c} is above max_inertia.{c}", subject=subject, field="min_inertia")
        return LimitSpec(name, kind, scope, lo, hi)
    axis = raw.get("axis")
    if axis not in _AXES:
        raise SteelyardError(f"required: the axis the line runs along, x, y or z (got {said(axis)})", subject=subject,
                             field="axis")
    through = raw.get("through", [0.0, 0.0])
    if type(through) is not list or len(through) != 2:
        raise SteelyardError(f"must be the line's 2 coordinates on the other axes, got {said(through)}"[:160],
                             subject=subject, field="through")
    pt = tuple(_si(v, "length", ledger.units.length, subject, "through") for v in through)
    hi = _si(raw["max_cg_offset"], "length", ledger.units.length, subject, "max_cg_offset")
    if not hi >= 0:
        raise SteelyardError(f"must not be negative, got {said(raw['max_cg_offset'])}", subject=subject,
                             field="max_cg_offset")
    return LimitSpec(name, kind, scope, np.array([np.nan]), np.array([hi]), _AXES.index(axis), pt)


def _read_limits(ledger: Ledger) -> tuple[LimitSpec, ...]:
    raw = ledger.limits
    out = [_read_limit(r, k, ledger) for k, r in enumerate(raw, start=1)]
    refuse_duplicate_names([x.name for x in out], "limit")
    return tuple(out)


def limit_specs(ledger: Ledger) -> tuple[LimitSpec, ...]:
    return _cached(ledger, "_limit_specs", lambda: _read_limits(ledger))


# --------------------------------------------------------------------------- evaluation


@dataclass(frozen=True, eq=False)
class LimitStatus:
    """Per state: the value checked and its bounds (the worst component for inertia), SI."""

    value: np.ndarray  # (p,)
    lo: np.ndarray  # (p,) NaN: no lower bound
    hi: np.ndarray  # (p,) NaN: no upper bound
    margin_lo: np.ndarray  # value - lo (NaN when no bound)
    margin_hi: np.ndarray  # hi - value
    margin: np.ndarray  # the smaller of the two; negative when broken
    ok: np.ndarray  # (p,) bool
    component: np.ndarray  # (p,) index into spec.components of the worst component


def needs_inertia(specs: Iterable[LimitSpec]) -> bool:
    return any(s.kind == "inertia" for s in specs)


def evaluate_limit(spec: LimitSpec, mass: np.ndarray, cg: np.ndarray, inertia: np.ndarray | None) -> LimitStatus:
    """Check states (mass (p,), cg (p, 3), inertia about the CG (p, 3, 3) for inertia limits)."""
    p = len(mass)
    if spec.kind == "mass":
        values = np.asarray(mass, dtype=float)[:, None]
    elif spec.kind == "inertia":
        if inertia is None:
            raise ValueError("inertia limits need the inertia of every state")
        i = np.asarray(inertia, dtype=float)
        # moments, then products as integrals (the tensor's off-diagonals are their negatives)
        values = np.stack([i[:, 0, 0], i[:, 1, 1], i[:, 2, 2], -i[:, 0, 1], -i[:, 0, 2], -i[:, 1, 2]], axis=1)
    else:
        a, b = [k for k in range(3) if k != spec.axis]
        d = np.asarray(cg, dtype=float)[:, [a, b]] - np.asarray(spec.through)
        values = np.hypot(d[:, 0], d[:, 1])[:, None]
    lo, hi = spec.lo[None, :], spec.hi[None, :]
    m_lo, m_hi = values - lo, hi - values
    both = np.fmin(m_lo, m_hi)  # NaN only where the component has no bound at all
    scale = np.fmax(np.abs(lo), np.abs(hi))
    tol = REL_TOL * np.where(np.isfinite(scale), scale, 0.0)
    score = np.where(np.isnan(both), np.inf, both + tol) / np.where(scale > 0, scale, 1.0)  # relative, for ranking
    score = np.where(np.isnan(values), -np.inf, score)
    j = np.argmin(score, axis=1)
    rows = np.arange(p)
    pick = lambda arr: np.broadcast_to(arr, values.shape)[rows, j]  # noqa: E731
    v, margin = pick(values), pick(both)
    ok = np.isfinite(v) & (np.isnan(margin) | (margin >= -pick(tol)))
    return LimitStatus(v, pick(lo), pick(hi), pick(m_lo), pick(m_hi), margin, ok, j)
