"""Roll-up: total mass, combined CG and inertia tensor of many items.

Two passes, per DESIGN.md: first the CG, then every item's offset from that
CG. The inertia about the CG is never formed as Σ m r² − M r_cg², which
loses digits when the vehicle sits far from its datum.

Extremes: the fast pass works on the numbers as given. When its figures are
not finite, or products of tiny masses and lengths could have dropped below
the normal float range, the roll-up is redone with every product formed on
mantissas and exponents, so a figure is infinite only when the true figure
itself is beyond a float. Such a roll-up carries an `Overflow` naming the row
that dominates; `check_finite_rollup` turns it into a located SteelyardError.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace
from functools import cached_property

import numpy as np

from steelyard.core.errors import SteelyardError, item_subject
from steelyard.core.physics.inertia import principal, radii_of_gyration


@dataclass(frozen=True)
class Overflow:
    """Why a roll-up has figures beyond a float: the row whose term dominates, and its field."""

    row: int
    field: str  # "mass" | "cg" | "inertia"
    message: str


@dataclass(frozen=True)
class MassProperties:
    mass: float
    cg: np.ndarray  # (3,), NaN when the mass is zero
    inertia_cg: np.ndarray  # (3, 3) about the combined CG
    inertia_datum: np.ndarray  # (3, 3) about the datum (origin)
    overflow: Overflow | None = None  # set when some figure is not finite

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


def check_finite_rollup(mp: MassProperties, items) -> None:
    """Refuse a roll-up whose totals, first moments or tensors are beyond a float.

    `items` are the rows' items (or their ids), in the order the roll-up was
    given them, or the ledger whose rows they are (its items are then read
    only to name one: a cache hit makes its Items only when asked). The error
    names the item whose term dominates and its field, so nothing downstream
    prints `inf` or asks numpy for the axes of it.
    """
    o = mp.overflow
    if o is None:
        return
    from steelyard.core.document.model import Ledger  # here: only a refusal needs it

    if isinstance(items, Ledger):
        items = items.items
    item = items[o.row] if 0 <= o.row < len(items) else o.row
    raise SteelyardError(o.message, subject=item_subject(getattr(item, "id", item)), field=o.field)


_BLOCK = 1 << 16  # rows per pass: offsets stay in cache instead of a full (n, 3) temporary

#: Products of the largest mass and lengths below this (2^-900, about 1e-271) may have lost digits
#: to the subnormal range; figures below _SUSPECT (2^-800) make the roll-up look at those products.
_SMALL = 2.0 ** -900
_SUSPECT = 2.0 ** -800


def combined_cg(mass: np.ndarray, cg: np.ndarray) -> tuple[float, np.ndarray]:
    """Total mass and CG, refined once on offsets so far datums keep their digits."""
    total = float(mass.sum())
    if total <= 0.0:
        return total, np.full(3, np.nan)
    c = (mass @ cg) / total
    c = c + (mass @ (cg - c)) / total
    return total, c


def _second_moments(mass: np.ndarray, cg: np.ndarray, total: float
                    ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """First moment Σ m r, CG and S = Σ m d dᵀ about it, d = r − CG, in cache-sized blocks.

    Pass one gives a first CG c0; pass two sums m d and m d dᵀ about c0 and
    corrects both exactly: CG = c0 + δ with δ = Σ m d / M, S = S0 − M δ δᵀ.
    δ is rounding-sized, so the correction cannot cancel digits. Works on the
    (3, n) view of the CGs: ledgers store them column-major for this.
    """
    x_all = cg.T if cg.T.flags.c_contiguous else np.ascontiguousarray(cg.T)
    first_moment = x_all @ mass
    c0 = first_moment / total
    s = np.zeros((3, 3))
    first = np.zeros(3)
    for start in range(0, len(mass), _BLOCK):
        x = x_all[:, start:start + _BLOCK] - c0[:, None]
        xm = x * mass[start:start + _BLOCK]
        first += xm.sum(axis=1)
        s += xm @ x.T
    delta = first / total
    return first_moment, c0 + delta, s - total * np.outer(delta, delta)


def sum_tensors(own: np.ndarray) -> np.ndarray:
    """Σ of (n, 3, 3) tensors; a BLAS product reads the array once, faster than .sum."""
    n = own.shape[0]
    if n == 0:
        return np.zeros((3, 3))
    return (np.ones(n) @ own.reshape(n, 9)).reshape(3, 3)


def _sym(t: np.ndarray) -> np.ndarray:
    return 0.5 * t + 0.5 * t.T  # equal to 0.5 (t + tᵀ), without overflowing near the float limit


def rollup(mass: np.ndarray, cg: np.ndarray, own: np.ndarray | None = None,
           own_rows: np.ndarray | None = None) -> MassProperties:
    """Mass properties of rows with masses (n,), CGs (n, 3), own inertia (n, 3, 3).

    With `own_rows`, `own` holds only those rows' tensors (k, 3, 3): the
    items with an own inertia, added by index. Never raises and never warns:
    figures beyond a float come back infinite with `overflow` set (see
    `check_finite_rollup`).
    """
    with np.errstate(over="ignore", invalid="ignore", under="ignore", divide="ignore"):
        mass = np.ascontiguousarray(mass, dtype=float)
        cg = np.asarray(cg, dtype=float).reshape(-1, 3)
        own_arr = None if own is None else np.ascontiguousarray(own, dtype=float)
        own_sum = np.zeros((3, 3)) if own_arr is None else sum_tensors(own_arr)
        total = float(mass.sum())
        if total <= 0.0 and math.isfinite(total):
            mp = MassProperties(total, np.full(3, np.nan), own_sum, own_sum.copy())
            if _finite(mp, None):
                return mp
            return replace(mp, overflow=_culprit(mass, cg, _every_row(own_arr, own_rows, mass), mp, None))
        mp, first = _plain(mass, cg, own_sum, total)
        if not _finite(mp, first) or _may_underflow(mass, cg, mp, first):
            mp, first = _scaled(mass, cg, own_sum)
        if _finite(mp, first):
            return mp
        return replace(mp, overflow=_culprit(mass, cg, _every_row(own_arr, own_rows, mass), mp, first))


def _every_row(own: np.ndarray | None, own_rows: np.ndarray | None, mass: np.ndarray) -> np.ndarray | None:
    """Own tensors one per row (the overflow search names a row): sparse ones spread out, only then."""
    if own_rows is None or own is None:
        return own
    dense = np.zeros((mass.shape[0], 3, 3))
    dense[np.asarray(own_rows, dtype=np.intp)] = own
    return dense


def _plain(mass, cg, own_sum, total) -> tuple[MassProperties, np.ndarray]:
    first, c, s = _second_moments(mass, cg, total)
    i_cg = _sym(own_sum + np.trace(s) * np.eye(3) - s)
    i_datum = i_cg + total * (float(c @ c) * np.eye(3) - np.outer(c, c))
    return MassProperties(total, c, i_cg, i_datum), first


def _psum(*factors: np.ndarray) -> tuple[float, int]:
    """Σ of the elementwise product of `factors` as (s, e), the sum being s · 2^e.

    Each factor is split into mantissa and exponent (frexp), mantissas are
    multiplied and exponents added per row, then every row is scaled to the
    largest row's exponent before summing. So no product overflows or
    underflows on the way: a row vanishes only when it is below 2^-1074 of
    the largest, far below the sum's rounding.
    """
    mant = np.ones(len(factors[0]))
    expo = np.zeros(len(factors[0]), dtype=np.int64)
    for f in factors:
        fm, fe = np.frexp(f)
        mant *= fm
        expo += fe
    live = mant != 0
    if not live.any():
        return 0.0, 0
    top = int(expo[live].max())
    return float(np.ldexp(mant, np.maximum(expo - top, -1100)).sum()), top


def _value(sum_exp: tuple[float, int]) -> float:
    s, e = sum_exp
    return float(np.ldexp(s, e))  # inf only when the sum itself is beyond a float


def _ratio(num: tuple[float, int], den: tuple[float, int]) -> float:
    return float(np.ldexp(num[0] / den[0], num[1] - den[1]))


def _tensor(own_sum: np.ndarray, s: np.ndarray) -> np.ndarray:
    """own + tr(S) E − S, each diagonal formed from the other two (tr(S) alone may overflow)."""
    d = np.diag(s)
    return _sym(own_sum + np.diag([d[1] + d[2], d[0] + d[2], d[0] + d[1]]) - (s - np.diag(d)))


def _scaled(mass, cg, own_sum) -> tuple[MassProperties, np.ndarray]:
    """The same roll-up with every product formed on mantissas and exponents (see `_psum`).

    For ledgers at the extremes only: a figure is infinite only when the true
    figure is beyond a float, and products of tiny masses and lengths keep
    their digits. Two passes as in `_plain`; offsets are halved so that
    x − CG cannot overflow, and the factor 2 (4 for S) goes back into the exponent.
    """
    x = [np.ascontiguousarray(cg[:, k]) for k in range(3)]
    m_sum = _psum(mass)
    moments = [_psum(mass, xk) for xk in x]
    c = np.array([_ratio(f, m_sum) for f in moments])
    for _ in range(2):  # refine by the first moment about the CG found so far (rounding-sized)
        moved = [_psum(mass, 0.5 * xk - 0.5 * ck) for xk, ck in zip(x, c)]
        c = c + np.array([_ratio((sd, ed + 1), m_sum) for sd, ed in moved])
    half = [0.5 * xk - 0.5 * ck for xk, ck in zip(x, c)]
    s_cg, s_datum = np.empty((3, 3)), np.empty((3, 3))
    for j in range(3):
        for k in range(j, 3):
            sc, ec = _psum(mass, half[j], half[k])
            s_cg[j, k] = s_cg[k, j] = _value((sc, ec + 2))
            s_datum[j, k] = s_datum[k, j] = _value(_psum(mass, x[j], x[k]))
    mp = MassProperties(_value(m_sum), c, _tensor(own_sum, s_cg), _tensor(own_sum, s_datum))
    return mp, np.array([_value(f) for f in moments])


def _finite(mp: MassProperties, first: np.ndarray | None) -> bool:
    ok = (math.isfinite(mp.mass) and np.isfinite(mp.inertia_cg).all() and np.isfinite(mp.inertia_datum).all()
          and (first is None or (np.isfinite(first).all() and np.isfinite(mp.cg).all())))
    return bool(ok) and bool(np.isfinite(mp.principal[0]).all())


def _may_underflow(mass, cg, mp: MassProperties, first: np.ndarray) -> bool:
    """Could products of tiny masses and lengths have left the normal float range?

    The fast pass is as good as its rounding (relative to the largest mass
    times the largest length on each axis) unless those products fall near
    the subnormal range. Checked only when a figure is tiny (an axis with
    every CG at zero counts), so an ordinary ledger pays nothing.
    """
    if mp.mass >= _SUSPECT and np.abs(first).min() >= _SUSPECT and np.trace(mp.inertia_datum) >= _SUSPECT:
        return False
    mmax = float(mass.max())
    reach = np.maximum(cg.max(axis=0), -cg.min(axis=0))
    reach = reach[reach > 0]
    return bool((mmax * reach < _SMALL).any() or (mmax * reach.max(initial=0.0) ** 2 < _SMALL and len(reach)))


def _culprit(mass, cg, own, mp: MassProperties, first) -> Overflow:
    """The row whose term dominates the figure that is not finite, worded for the user."""
    with np.errstate(divide="ignore"):
        log_m = np.log10(mass)
        log_r = np.log10(np.abs(cg).max(axis=1)) if len(cg) else np.zeros(0)
        log_own = (np.log10(np.abs(own).reshape(len(own), 9).max(axis=1)) if own is not None and len(own)
                   else np.full(len(mass), -np.inf))
    if not math.isfinite(mp.mass):
        i = int(np.argmax(mass))
        return Overflow(i, "mass", f"too large: {mass[i]:.6g} kg makes the total mass overflow in SI units")
    if first is not None and not (np.isfinite(first).all() and np.isfinite(mp.cg).all()):
        term = log_m + log_r
        i = int(np.argmax(term))
        return Overflow(i, "cg", f"too large: mass × CG (about 1e{term[i]:.0f} kg·m) makes the first "
                                 "moment overflow in SI units")
    orbit = log_m + 2 * log_r
    i, j = int(np.argmax(orbit)), int(np.argmax(log_own))
    if log_own[j] >= orbit[i]:
        return Overflow(j, "inertia", f"too large: own inertia (about 1e{log_own[j]:.0f} kg·m²) makes the "
                                      "inertia tensor overflow in SI units")
    return Overflow(i, "cg", f"too large: mass × distance² (about 1e{orbit[i]:.0f} kg·m²) makes the "
                             "inertia tensor overflow in SI units")


def rollup_state(state) -> MassProperties:
    """Roll-up of a loadout state (see core.loadout.State): own inertia added by index where sparse."""
    rows, values = state.own_sparse()
    return rollup(state.mass, state.cg, values, own_rows=rows)
