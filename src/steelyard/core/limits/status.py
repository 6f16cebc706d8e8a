"""Envelope status of one roll-up: the numbers behind every margin display.

Envelope polygons are validated and prepared once (`geometry`, cached by
their vertices), so redrawing a panel or checking many loadouts never
rebuilds them. A %MAC envelope is converted to stations first
(core.limits.envelope_points).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from functools import lru_cache

import numpy as np

from steelyard.core.limits.envelope import EnvelopeGeometry
from steelyard.core.errors import SteelyardError
from steelyard.core.document.model import Envelope, Ledger
from steelyard.core.physics.rollup import MassProperties, check_finite_rollup

AXIS_INDEX = {"x": 0, "y": 1, "z": 2}


@dataclass(frozen=True)
class EnvelopeResult:
    name: str
    axis: str
    cg: float  # the CG coordinate on the envelope's axis, m
    mass: float
    inside: bool
    lo: float | None  # allowed CG range at this mass, m (None outside its mass range)
    hi: float | None
    margin: float | None  # to the nearer limit, m; negative outside
    mass_margin: float | None  # kg more at this CG before the edge

    @property
    def limits(self) -> tuple[float, float] | None:
        return None if self.lo is None else (self.lo, self.hi)

    @property
    def margin_lo(self) -> float | None:
        """cg − lo: room towards the low limit (fwd on an x axis pointing aft), m."""
        return None if self.lo is None else self.cg - self.lo

    @property
    def margin_hi(self) -> float | None:
        """hi − cg: room towards the high limit, m."""
        return None if self.hi is None else self.hi - self.cg


@lru_cache(maxsize=256)
def _geometry(points: tuple[tuple[float, float], ...]) -> EnvelopeGeometry:
    return EnvelopeGeometry.from_points(points)


def geometry(points, name: str | None = None) -> EnvelopeGeometry:
    """The prepared polygon for these (cg m, mass kg) vertices, built once per distinct outline."""
    key = tuple((float(c), float(m)) for c, m in points)
    try:
        return _geometry(key)
    except SteelyardError as exc:
        raise exc.located(subject=None if name is None else f"envelope {name!r}")


def envelope_geometry(ledger: Ledger, env: Envelope) -> EnvelopeGeometry:
    from steelyard.core.limits.rules import envelope_points

    return geometry(envelope_points(ledger, env), env.name)


def _opt(x) -> float | None:
    x = float(x)
    return None if math.isnan(x) else x


def envelope_result(env: Envelope, mp: MassProperties, ledger: Ledger | None = None) -> EnvelopeResult:
    c = float(mp.cg[AXIS_INDEX[env.axis]])
    if not math.isfinite(c):
        return EnvelopeResult(env.name, env.axis, c, mp.mass, False, None, None, None, None)
    g = envelope_geometry(ledger, env) if ledger is not None else geometry(env.points, env.name)
    st = g.evaluate(np.array([c]), np.array([mp.mass]))
    lo, hi = _opt(st.lo[0]), _opt(st.hi[0])
    if lo is None or hi is None:
        lo = hi = None
    return EnvelopeResult(env.name, env.axis, c, mp.mass, bool(st.inside[0]), lo, hi,
                          _opt(st.margin[0]), _opt(st.mass_margin[0]))


def envelope_results(ledger: Ledger, mp: MassProperties) -> list[EnvelopeResult]:
    """Every envelope's status for this roll-up of `ledger` (its rows in item order).

    A roll-up whose figures overflowed has no status: it is refused here with
    the item and field to blame, so whatever shows envelope status (roll-up,
    report, snapshot, diff) stops with one line instead of printing inf.
    """
    check_finite_rollup(mp, ledger)
    return [envelope_result(env, mp, ledger) for env in ledger.envelopes]


# --------------------------------------------------------------------------- room left


@dataclass(frozen=True)
class RoomLeft:
    """Mass that can still be added at the current CG, and the envelope or limit that stops it (SI)."""

    mass: float  # kg; 0 when an applicable envelope is already left, negative when over a max_mass
    kind: str  # "envelope" | "mass"
    name: str

    @property
    def what(self) -> str:
        """'envelope "normal"' / 'mass limit "MTOW"': the binding check as a user names it."""
        return f'{"envelope" if self.kind == "envelope" else "mass limit"} "{self.name}"'


def room_left(findings) -> RoomLeft | None:
    """The least of every applicable envelope's top (at this CG) and every applicable ``max_mass``.

    `findings` are core.limits.checks Findings of one state, so scopes are
    the check's own. Mass added at the CG moves neither the CG nor the
    inertia about it, so CG-offset and inertia limits never bound it. An
    applicable envelope already left with no top at this CG gives 0. None
    when nothing applicable bounds the mass.
    """
    best: RoomLeft | None = None
    for f in findings:
        if not f.applies:
            continue
        if f.kind == "envelope":
            value = f.mass_margin if f.mass_margin is not None else (None if f.ok else 0.0)
        elif f.kind == "mass":
            value = f.margin_hi
        else:
            continue
        if value is not None and (best is None or value < best.mass):
            best = RoomLeft(float(value), f.kind, f.name)
    return best
