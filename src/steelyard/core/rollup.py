"""Roll-up: total mass, combined CG and inertia tensor of many items.

Two passes, per DESIGN.md: first the CG, then every item's offset from that
CG. The inertia about the CG is never formed as Σ m r² − M r_cg², which
loses digits when the vehicle sits far from its datum.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np

from .inertia import principal, radii_of_gyration


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


def combined_cg(mass: np.ndarray, cg: np.ndarray) -> tuple[float, np.ndarray]:
    """Total mass and CG, refined once on offsets so far datums keep their digits."""
    total = float(mass.sum())
    if total <= 0.0:
        return total, np.full(3, np.nan)
    c = (mass @ cg) / total
    c = c + (mass @ (cg - c)) / total
    return total, c


def rollup(mass: np.ndarray, cg: np.ndarray, own: np.ndarray | None = None) -> MassProperties:
    """Mass properties of rows with masses (n,), CGs (n, 3), own inertia (n, 3, 3)."""
    mass = np.asarray(mass, dtype=float)
    cg = np.asarray(cg, dtype=float).reshape(-1, 3)
    total, c = combined_cg(mass, cg)
    own_sum = np.zeros((3, 3)) if own is None or len(mass) == 0 else own.sum(axis=0)
    if total <= 0.0:
        return MassProperties(total, c, own_sum, own_sum.copy())
    d = cg - c
    s = (d * mass[:, None]).T @ d  # Σ m d dᵀ, the second moments about the CG
    i_cg = own_sum + np.trace(s) * np.eye(3) - s
    i_cg = 0.5 * (i_cg + i_cg.T)
    i_datum = i_cg + total * (float(c @ c) * np.eye(3) - np.outer(c, c))
    return MassProperties(total, c, i_cg, i_datum)


def rollup_state(state) -> MassProperties:
    """Roll-up of a loadout state (see core.loadout.State)."""
    return rollup(state.mass, state.cg, state.own)
