"""Roll-up: total mass, combined CG and inertia tensor of many items.

Two passes, per DESIGN.md: first the CG, then every item's offset from that
CG. The inertia about the CG is never formed as Σ m r² − M r_cg², which
loses digits when the vehicle sits far from its datum.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

from steelyard.core.physics.inertia import principal, radii_of_gyration


@dataclass(frozen=True)
class MassProperties:
    mass: float
    cg: np.ndarray  # (3,), NaN when the mass is zero
    inertia_cg: np.ndarray  # (3, 3) about the combined CG
    inertia_datum: np.ndarray  # (3, 3) about the datum (origin)

    @cached_property
    def principal(self) -> tuple[np.ndarray, np.ndarray]:
        return principal(self.inertia_cg)

    @property
    def principal_moments(self) -> np.ndarray:
        return self.principal[0]

    @property
    def principal_axes(self) -> np.ndarray:
        return self.principal[1]

    @property
    def radii_of_gyration(self) -> np.ndarray:
        return radii_of_gyration(self.inertia_cg, self.mass)


_BLOCK = 1 << 16  # rows per pass: offsets stay in cache instead of a full (n, 3) temporary


def combined_cg(mass: np.ndarray, cg: np.ndarray) -> tuple[float, np.ndarray]:
    """Total mass and CG, refined once on offsets so far datums keep their digits."""
    total = float(mass.sum())
    if total <= 0.0:
        return total, np.full(3, np.nan)
    c = (mass @ cg) / total
    c = c + (mass @ (cg - c)) / total
    return total, c


def _second_moments(mass: np.ndarray, cg: np.ndarray, total: float) -> tuple[np.ndarray, np.ndarray]:
    """CG and S = Σ m d dᵀ about it, d = r − CG, in cache-sized blocks.

    Pass one gives a first CG c0; pass two sums m d and m d dᵀ about c0 and
    corrects both exactly: CG = c0 + δ with δ = Σ m d / M, S = S0 − M δ δᵀ.
    δ is rounding-sized, so the correction cannot cancel digits. Works on the
    (3, n) view of the CGs: ledgers store them column-major for this.
    """
    x_all = cg.T if cg.T.flags.c_contiguous else np.ascontiguousarray(cg.T)
    c0 = (x_all @ mass) / total
    s = np.zeros((3, 3))
    first = np.zeros(3)
    for start in range(0, len(mass), _BLOCK):
        x = x_all[:, start:start + _BLOCK] - c0[:, None]
        xm = x * mass[start:start + _BLOCK]
        first += xm.sum(axis=1)
        s += xm @ x.T
    delta = first / total
    return c0 + delta, s - total * np.outer(delta, delta)


def sum_tensors(own: np.ndarray) -> np.ndarray:
    """Σ of (n, 3, 3) tensors; a BLAS product reads the array once, faster than .sum."""
    n = own.shape[0]
    if n == 0:
        return np.zeros((3, 3))
    return (np.ones(n) @ own.reshape(n, 9)).reshape(3, 3)


def rollup(mass: np.ndarray, cg: np.ndarray, own: np.ndarray | None = None) -> MassProperties:
    """Mass properties of rows with masses (n,), CGs (n, 3), own inertia (n, 3, 3).

    Absurd but finite inputs (1e300 kg at 1e10 m) overflow to inf quietly; the
    caller shows such a total as undefined rather than a warning on stderr.
    """
    with np.errstate(over="ignore", invalid="ignore"):
        return _rollup(mass, cg, own)


def _rollup(mass: np.ndarray, cg: np.ndarray, own: np.ndarray | None) -> MassProperties:
    mass = np.ascontiguousarray(mass, dtype=float)
    cg = np.asarray(cg, dtype=float).reshape(-1, 3)
    own_sum = np.zeros((3, 3)) if own is None else sum_tensors(np.ascontiguousarray(own, dtype=float))
    total = float(mass.sum())
    if total <= 0.0:
        return MassProperties(total, np.full(3, np.nan), own_sum, own_sum.copy())
    c, s = _second_moments(mass, cg, total)
    i_cg = own_sum + np.trace(s) * np.eye(3) - s
    i_cg = 0.5 * (i_cg + i_cg.T)
    i_datum = i_cg + total * (float(c @ c) * np.eye(3) - np.outer(c, c))
    return MassProperties(total, c, i_cg, i_datum)


def rollup_state(state) -> MassProperties:
    """Roll-up of a loadout state (see core.loadout.State)."""
    return rollup(state.mass, state.cg, state.own)
