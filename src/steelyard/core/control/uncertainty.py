"""Uncertainty of mass and CG: linear propagation, worst case, Monte Carlo.

An item may say how well its mass and CG are known (`Item.tolerance`):

    tolerance = { mass = 0.5, cg = [0.01, 0.01, 0.005], kind = "sigma" }

`kind` is required, because the same number means different things:
"sigma" is one standard deviation of a normal error; "bound" is a +/- limit,
treated as a uniform error (sigma = bound/sqrt(3)) for the statistics and as
the limit itself for the worst case. A sigma-kind tolerance enters the worst
case as 3 sigma (common practice). `mass` is per unit, like the item's mass (a
row of `quantity` units is taken as fully correlated: quantity x tolerance);
"5 %" means 5 % of the unit mass. `cg` is one value for all three axes or
[x, y, z]. Numbers are in the file's units, or strings with a unit.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass

import numpy as np

from steelyard.core.errors import SteelyardError, item_subject, said
from steelyard.core.document.model import Ledger, more_rows, rows_with
from steelyard.core.units import parse_number, to_si

KINDS = ("sigma", "bound")
SQRT3 = math.sqrt(3.0)
#: worst-case multiple of a sigma-kind tolerance (common practice)
SIGMA_TO_BOUND = 3.0
#: float elements per Monte Carlo draw array; bounds memory to tens of MB
CHUNK_ELEMENTS = 1 << 21


def _non_negative(value: object, dimension: str, unit: str, subject: str, field: str,
                  unit_mass: float = 0.0) -> float:
    try:
        if isinstance(value, str) and value.strip().endswith("%") and dimension == "mass":
            out = parse_number(value.strip()[:-1]) / 100.0 * unit_mass
        else:
            out = to_si(value, dimension, unit)
    except SteelyardError as exc:
        raise exc.located(subject=subject, field=field)
    if not out >= 0.0 or not math.isfinite(out):
        raise SteelyardError(f"tolerance must be a finite value >= 0, got {said(value)}",
                             subject=subject, field=field)
    return out


def tolerance_kinds(ledger: Ledger) -> np.ndarray:
    """Kind of each item's tolerance (n,): "sigma", "bound", or "" (none given)."""
    out = np.full(len(ledger.items), "", dtype="<U5")
    for i, item in enumerate(ledger.items):
        tol = item.tolerance
        if tol is not None:
            out[i] = _kind(tol, item_subject(item.id))
    return out


def _kind(tol: object, subject: str) -> str:
    if not isinstance(tol, Mapping):
        raise SteelyardError("write tolerance = { mass = ..., cg = ..., kind = \"sigma\" }",
                             subject=subject, field="tolerance")
    kind = tol.get("kind")
    if kind not in KINDS:
        raise SteelyardError(f"tolerance kind must be \"sigma\" or \"bound\", got {said(kind)}",
                             subject=subject, field="tolerance.kind")
    unknown = set(tol) - {"mass", "cg", "kind"}
    if unknown:
        raise SteelyardError(f"unknown key {said(sorted(map(str, unknown))[0])} (use mass, cg, kind)",
                             subject=subject, field="tolerance")
    return kind


def parse_tolerances(ledger: Ledger) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """(mass_sigma (n,), cg_sigma (n, 3), mass_bound (n,), cg_bound (n, 3)), SI, per row.

    Zeros where an item gives no tolerance.
    """
    n = len(ledger.items)
    mass_sigma, mass_bound = np.zeros(n), np.zeros(n)
    cg_sigma, cg_bound = np.zeros((n, 3)), np.zeros((n, 3))
    units = ledger.units
    items = ledger.items
    for i in rows_with(items, "tolerance", among=more_rows(ledger)):
        item = items[i]
        tol = item.tolerance
        if tol is None:
            continue
        subject = item_subject(item.id)
        kind = _kind(tol, subject)
        m = 0.0
        if "mass" in tol:
            m = item.quantity * _non_negative(tol["mass"], "mass", units.mass, subject,
                                              "tolerance.mass", unit_mass=item.mass)
        r = np.zeros(3)
        if "cg" in tol:
            raw = tol["cg"]
            values = raw if isinstance(raw, (list, tuple)) else [raw] * 3
            if len(values) != 3:
                raise SteelyardError(f"cg tolerance needs 1 or 3 values, got {len(values)}",
                                     subject=subject, field="tolerance.cg")
            r = np.array([_non_negative(v, "length", units.length, subject, "tolerance.cg")
                          for v in values])
        if kind == "sigma":
            mass_sigma[i], cg_sigma[i] = m, r
            mass_bound[i], cg_bound[i] = SIGMA_TO_BOUND * m, SIGMA_TO_BOUND * r
        else:
            mass_sigma[i], cg_sigma[i] = m / SQRT3, r / SQRT3
            mass_bound[i], cg_bound[i] = m, r
    return mass_sigma, cg_sigma, mass_bound, cg_bound


def _columns(m, cg):
    m = np.asarray(m, dtype=float).reshape(-1)
    cg = np.asarray(cg, dtype=float).reshape(-1, 3)
    total = float(m.sum())
    if not total > 0.0:
        raise SteelyardError("total mass must be > 0 to have a CG", subject="uncertainty")
    ref = cg[int(np.argmax(m))]
    with np.errstate(over="ignore", invalid="ignore", under="ignore"):
        centre = ref + (m @ (cg - ref)) / total
    return m, cg, total, centre


@dataclass(frozen=True)
class Spread:
    """First-order spread of the totals; the statistics assume independent inputs."""

    mass: float  # sigma (or worst-case bound) of total mass, kg
    cg: np.ndarray  # (3,) sigma (or bound) of each CG coordinate, m
    covariance: np.ndarray | None = None  # (4, 4) of [mass, x, y, z]; None for worst case


def _partials(m, cg, total, centre):
    """d cg / d m_i (n, 3) and d cg_k / d r_ik (n,).

    A total mass near the smallest float (a denormal such as 5e-324 kg) makes
    d cg / d m overflow: the CG of next to nothing moves without bound when a
    mass changes. That is computed quietly and reported as not available
    (`_available`), never as a warning on the terminal.
    """
    with np.errstate(over="ignore", divide="ignore", invalid="ignore", under="ignore"):
        return (cg - centre) / total, m / total


def _available(values: np.ndarray) -> np.ndarray:
    """Spread values with anything a float cannot hold (inf, NaN) as NaN: not available."""
    out = np.array(values, dtype=float)
    out[~np.isfinite(out)] = np.nan
    return out


def propagate(m, cg, mass_sigma, cg_sigma) -> Spread:
    """Linear (first-order) sigma of total mass and CG for independent inputs.

    d cg / d m_i = (r_i - cg) / M and d cg_k / d r_ik = m_i / M.
    """
    m, cg, total, centre = _columns(m, cg)
    sm = np.asarray(mass_sigma, dtype=float).reshape(-1)
    sr = np.asarray(cg_sigma, dtype=float).reshape(-1, 3)
    dcg_dm, dcg_dr = _partials(m, cg, total, centre)
    # Jacobian of [M, x, y, z] w.r.t. masses: rows [1, dcg/dm_i]
    jm = np.concatenate([np.ones((len(m), 1)), dcg_dm], axis=1)  # (n, 4)
    with np.errstate(over="ignore", invalid="ignore", under="ignore"):
        cov = (jm * (sm ** 2)[:, None]).T @ jm
        cov[1:, 1:] += np.diag(((dcg_dr[:, None] * sr) ** 2).sum(axis=0))
        cov = _available(cov)
        sd = _available(np.sqrt(np.diag(cov)))
    return Spread(float(sd[0]), sd[1:], cov)


def worst_case(m, cg, mass_bound, cg_bound) -> Spread:
    """Worst-case bounds: sum of |partial| x bound, first order."""
    m, cg, total, centre = _columns(m, cg)
    bm = np.asarray(mass_bound, dtype=float).reshape(-1)
    br = np.asarray(cg_bound, dtype=float).reshape(-1, 3)
    dcg_dm, dcg_dr = _partials(m, cg, total, centre)
    with np.errstate(over="ignore", invalid="ignore", under="ignore"):
        cg_bound_total = _available(np.abs(dcg_dm).T @ bm + dcg_dr @ br)
        mass_bound = float(_available(bm.sum()))
    return Spread(mass_bound, cg_bound_total)


def _uniform_mask(kind, n: int) -> np.ndarray:
    if isinstance(kind, str):
        if kind not in KINDS:
            raise ValueError(f"kind must be 'sigma' or 'bound', got {kind!r}")
        return np.full(n, kind == "bound")
    kinds = np.asarray(kind).reshape(-1)
    if kinds.shape != (n,):
        raise ValueError(f"kind must be one string or {n} strings")
    return kinds == "bound"


def _draw(rng_normal, rng_uniform, shape, uniform_cols: np.ndarray) -> np.ndarray:
    """Standard draws (zero mean, unit sigma): normal, or uniform on +/-sqrt(3)."""
    out = np.empty(shape)
    out[:, ~uniform_cols] = rng_normal.standard_normal((shape[0], int((~uniform_cols).sum())))
    out[:, uniform_cols] = rng_uniform.uniform(-SQRT3, SQRT3, (shape[0], int(uniform_cols.sum())))
    return out


def monte_carlo(m, cg, mass_sigma, cg_sigma, samples: int = 20000, seed: int = 0,
                kind: str | Sequence[str] | np.ndarray = "sigma",
                ) -> tuple[np.ndarray, np.ndarray]:
    """Seeded samples of total mass (s,) and CG (s, 3) with independent item errors.

    `kind` per item (or one for all): "sigma" draws normal errors, "bound"
    uniform ones of the same sigma (the sigma arrays are sigmas either way, as
    `parse_tolerances` returns them). Only uncertain rows are drawn, in chunks
    of samples, from separate streams, so the result does not depend on the
    chunk size. Sampled masses are not truncated at zero.
    """
    m, cg, total, centre = _columns(m, cg)
    n = len(m)
    sm = np.asarray(mass_sigma, dtype=float).reshape(n)
    sr = np.asarray(cg_sigma, dtype=float).reshape(n, 3)
    if samples < 1:
        raise ValueError("samples must be >= 1")
    if (sm < 0).any() or (sr < 0).any() or not (np.isfinite(sm).all() and np.isfinite(sr).all()):
        raise ValueError("sigmas must be finite and >= 0")
    uniform = _uniform_mask(kind, n)

    rows = np.flatnonzero((sm > 0) | (sr > 0).any(axis=1))
    mass_rows = rows[sm[rows] > 0]
    cg_cols = np.flatnonzero((sr[rows] > 0).reshape(-1))  # flat (row-in-`rows`, axis)
    with np.errstate(over="ignore", invalid="ignore", under="ignore"):
        offset = cg[rows] - centre  # (u, 3)
        # Nominal moment about the centre of all rows (round-off size; kept for exactness).
        base_moment = m @ (cg - centre)
    streams = [np.random.default_rng(s) for s in np.random.SeedSequence(seed).spawn(4)]

    mass_out = np.empty(samples)
    cg_out = np.empty((samples, 3))
    per_sample = max(1, 4 * len(rows))
    chunk = max(1, CHUNK_ELEMENTS // per_sample)
    in_rows_mass = np.searchsorted(rows, mass_rows)
    col_rows = rows[cg_cols // 3]
    col_sigma = sr.reshape(-1)[col_rows * 3 + cg_cols % 3]
    for start in range(0, samples, chunk):
        c = min(chunk, samples - start)
        dm = np.zeros((c, len(rows)))
        if len(mass_rows):
            z = _draw(streams[0], streams[1], (c, len(mass_rows)), uniform[mass_rows])
            dm[:, in_rows_mass] = z * sm[mass_rows]
        dr = np.zeros((c, len(rows) * 3))
        if len(cg_cols):
            z = _draw(streams[2], streams[3], (c, len(cg_cols)), uniform[col_rows])
            dr[:, cg_cols] = z * col_sigma
        dr = dr.reshape(c, len(rows), 3)
        # Extreme inputs (a 1e300 kg tolerance, a denormal total) may overflow: such a
        # sample's CG is inf or NaN, counted as outside, never a warning.
        with np.errstate(divide="ignore", invalid="ignore", over="ignore", under="ignore"):
            mass_s = total + dm.sum(axis=1)
            moment = base_moment + dm @ offset + np.einsum("cu,cuk->ck", m[rows] + dm, dr)
            cg_s = centre + moment / np.where(mass_s > 0, mass_s, np.nan)[:, None]
        mass_out[start:start + c] = mass_s
        cg_out[start:start + c] = cg_s
    return mass_out, cg_out


def probability_outside(mass_s: np.ndarray, cg_s_axis: np.ndarray,
                        inside_fn: Callable[[np.ndarray, np.ndarray], np.ndarray],
                        ) -> tuple[float, float]:
    """(p, standard error) that a sample falls outside, from `inside_fn(cg, mass)`.

    Standard error is the binomial sqrt(p (1 - p) / s). With no sample
    outside it is 0; then about 3/s is an upper 95 % bound (rule of three).
    A sample with no CG (NaN) counts as outside unless `inside_fn` says otherwise.
    """
    mass_s = np.asarray(mass_s, dtype=float).reshape(-1)
    cg_s_axis = np.asarray(cg_s_axis, dtype=float).reshape(-1)
    if mass_s.shape != cg_s_axis.shape or mass_s.size == 0:
        raise ValueError("mass and CG samples must be non-empty and of one length")
    inside = np.asarray(inside_fn(cg_s_axis, mass_s), dtype=bool).reshape(-1)
    if inside.shape != mass_s.shape:
        raise ValueError("inside_fn must return one bool per sample")
    s = mass_s.size
    p = float(s - np.count_nonzero(inside)) / s
    return p, math.sqrt(p * (1.0 - p) / s)
