"""Envelope status of one roll-up: the numbers behind every margin display."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from .model import Envelope, Ledger
from .rollup import MassProperties

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


def _opt(x) -> float | None:
    x = float(x)
    return None if math.isnan(x) else x


def envelope_result(env: Envelope, mp: MassProperties) -> EnvelopeResult:
    from .envelope import evaluate

    c = float(mp.cg[AXIS_INDEX[env.axis]])
    if not math.isfinite(c):
        return EnvelopeResult(env.name, env.axis, c, mp.mass, False, None, None, None, None)
    st = evaluate(env.array, np.array([c]), np.array([mp.mass]))
    lo, hi = _opt(st.lo[0]), _opt(st.hi[0])
    if lo is None or hi is None:
        lo = hi = None
    return EnvelopeResult(env.name, env.axis, c, mp.mass, bool(st.inside[0]), lo, hi,
                          _opt(st.margin[0]), _opt(st.mass_margin[0]))


def envelope_results(ledger: Ledger, mp: MassProperties) -> list[EnvelopeResult]:
    return [envelope_result(env, mp) for env in ledger.envelopes]
