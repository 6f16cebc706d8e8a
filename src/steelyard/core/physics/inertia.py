"""Inertia tensor algebra, vectorised over items.

Convention (DESIGN.md): products of inertia are the integrals
``Pxy = ∫ x·y dm`` about the CG; the tensor's off-diagonal terms are their
negatives. Every function here takes either one tensor (3, 3) or a stack
(n, 3, 3), so the roll-up never loops over items in Python.
"""

from __future__ import annotations

import math

import numpy as np

from steelyard.core.errors import InertiaError

#: Order of the six components as stored in files and arrays.
COMPONENTS = ("xx", "yy", "zz", "xy", "xz", "yz")

#: Relative tolerance of the realisability check, as a fraction of the trace.
#: Values typed with six significant figures pass; real violations do not.
REALISABLE_RTOL = 1e-6
#: Below this (kg·m², about 1e-300) components are at or near the subnormal range, where floats keep
#: too few digits for the test to mean anything: such a tensor is taken as zero.
TINY_INERTIA = 2.0 ** -997


def tensor_from_six(six: np.ndarray) -> np.ndarray:
    """(…, 6) [xx, yy, zz, Pxy, Pxz, Pyz] -> (…, 3, 3) tensor (off-diagonal −P)."""
    six = np.asarray(six, dtype=float)
    xx, yy, zz, xy, xz, yz = np.moveaxis(six, -1, 0)
    out = np.empty(six.shape[:-1] + (3, 3))
    out[..., 0, 0], out[..., 1, 1], out[..., 2, 2] = xx, yy, zz
    out[..., 0, 1] = out[..., 1, 0] = -xy
    out[..., 0, 2] = out[..., 2, 0] = -xz
    out[..., 1, 2] = out[..., 2, 1] = -yz
    return out


def six_from_tensor(tensor: np.ndarray) -> np.ndarray:
    """(…, 3, 3) tensor -> (…, 6) [xx, yy, zz, Pxy, Pxz, Pyz] (products as integrals)."""
    t = np.asarray(tensor, dtype=float)
    return np.stack(
        [t[..., 0, 0], t[..., 1, 1], t[..., 2, 2], -t[..., 0, 1], -t[..., 0, 2], -t[..., 1, 2]],
        axis=-1,
    )


def point_mass_tensor(mass: np.ndarray, offset: np.ndarray) -> np.ndarray:
    """m (|d|² E − d dᵀ): the parallel-axis term, (n,) and (n, 3) -> (n, 3, 3)."""
    m = np.asarray(mass, dtype=float)
    d = np.asarray(offset, dtype=float)
    outer = d[..., :, None] * d[..., None, :]
    sq = np.einsum("...i,...i->...", d, d)
    eye = np.eye(3)
    return m[..., None, None] * (sq[..., None, None] * eye - outer)


def parallel_axis(tensor_cg: np.ndarray, mass, offset) -> np.ndarray:
    """Tensor about a point O, given the tensor about the CG and d = CG − O."""
    return np.asarray(tensor_cg, dtype=float) + point_mass_tensor(mass, offset)


def rotate(tensor: np.ndarray, rotation: np.ndarray) -> np.ndarray:
    """R I Rᵀ: the tensor of a body turned by R (v_body = R v_local)."""
    r = np.asarray(rotation, dtype=float)
    return r @ np.asarray(tensor, dtype=float) @ np.swapaxes(r, -1, -2)


def principal(tensor: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Principal moments (ascending) and axes (row i belongs to moment i).

    Signs are made deterministic: in rows 0 and 1 the component of largest
    magnitude is positive (the first such on a tie); row 2 is row0 × row1, so
    the axes form a right-handed set. Where two moments are equal the axes in
    that plane are not unique; numpy's eigh choice is kept, with the same sign
    rule. A diagonal tensor returns body axes.

    A tensor with a non-finite entry has no axes: NaN moments and axes come
    back instead of a LinAlgError. The tensor is scaled by a power of two
    (exact) before the eigen-solver, so entries near the float limit do not
    overflow on the way; a moment beyond a float comes back infinite.
    """
    t = np.asarray(tensor, dtype=float)
    if not np.isfinite(t).all():
        return np.full(3, np.nan), np.full((3, 3), np.nan)
    peak = float(np.abs(t).max())
    shift = math.frexp(peak)[1] if peak > 0 else 0
    t = np.ldexp(t, -shift)
    t = 0.5 * (t + t.T)
    scale = max(float(np.abs(t).max()), np.finfo(float).tiny)
    off = np.abs(t - np.diag(np.diag(t))).max()
    if off <= 1e-15 * scale:
        d = np.diag(t)
        order = np.argsort(d, kind="stable")
        axes = np.eye(3)[order]
        if np.linalg.det(axes) < 0:
            axes[2] = -axes[2]
            axes[2] = np.cross(axes[0], axes[1])
        with np.errstate(over="ignore"):
            return np.ldexp(d[order], shift), axes
    values, vectors = np.linalg.eigh(t)
    with np.errstate(over="ignore"):
        values = np.ldexp(values, shift)
    axes = vectors.T.copy()
    for i in (0, 1):
        k = int(np.argmax(np.abs(axes[i]) - 1e-12 * np.arange(3)))
        if axes[i, k] < 0:
            axes[i] = -axes[i]
    axes[2] = np.cross(axes[0], axes[1])
    return values, axes


def radius_of_gyration(moment: float, mass: float) -> float:
    """k = sqrt(I / m); as sqrt(I) / sqrt(m) where I / m alone would overflow (a tiny mass)."""
    if mass <= 0:
        return 0.0
    moment = max(float(moment), 0.0)
    with np.errstate(over="ignore"):
        ratio = moment / mass
    return math.sqrt(ratio) if math.isfinite(ratio) else math.sqrt(moment) / math.sqrt(mass)


def radii_of_gyration(tensor: np.ndarray, mass: float) -> np.ndarray:
    """k = sqrt(I_axis / m) about each body axis; zeros for zero mass."""
    diag = np.diagonal(np.asarray(tensor, dtype=float), axis1=-2, axis2=-1)
    return np.array([radius_of_gyration(d, mass) for d in diag])


def realisability_problem(tensor: np.ndarray, rtol: float = REALISABLE_RTOL) -> str | None:
    """Why no physical body can have this tensor, or None if one can.

    A tensor is realisable when it is symmetric and the second-moment matrix
    S = ½ tr(I) E − I (whose entries are ∫ x_i x_j dm) is positive
    semi-definite. That one test covers I ⪰ 0 and every triangle inequality
    (each principal moment at most the sum of the other two).
    """
    t = np.asarray(tensor, dtype=float)
    if not np.all(np.isfinite(t)):
        return "inertia has a non-finite component"
    # the test is scale-free: run it on the tensor scaled by a power of two (exact), so entries
    # near the float limit cannot overflow the trace; moments are scaled back for the message
    peak = float(np.abs(t).max())
    if peak < TINY_INERTIA:  # subnormal floats carry no relative precision: such a tensor is zero
        return None
    shift = math.frexp(peak)[1] if peak > 0 else 0
    t = np.ldexp(t, -shift)
    trace = float(np.trace(t))
    tol = rtol * max(abs(trace), np.finfo(float).tiny)
    if np.abs(t - t.T).max() > tol:
        return "inertia tensor is not symmetric"
    if trace < -tol:
        return "inertia has a negative trace"
    s = 0.5 * trace * np.eye(3) - t
    low = float(np.linalg.eigvalsh(s).min())
    if low < -tol:
        scaled = np.linalg.eigvalsh(t)
        with np.errstate(over="ignore"):
            moments = np.ldexp(scaled, shift)
        if scaled.min() < -tol:
            return f"inertia is not positive semi-definite (principal moment {moments.min():.6g})"
        a, b, c = moments
        return (f"inertia is not physically possible: principal moment {c:.6g} exceeds "
                f"the sum of the other two ({a:.6g} + {b:.6g})")
    return None


def realisability_problems(tensors: np.ndarray, rtol: float = REALISABLE_RTOL) -> np.ndarray:
    """Vectorised screen: boolean mask (n,) of tensors that fail the test above."""
    t = np.asarray(tensors, dtype=float)
    if t.shape[0] == 0:
        return np.zeros(0, dtype=bool)
    finite = np.all(np.isfinite(t), axis=(1, 2))
    t0 = np.where(finite[:, None, None], t, 0.0)
    peak = np.abs(t0).max(axis=(1, 2))
    t0 = np.ldexp(t0, -np.frexp(peak)[1][:, None, None])  # scale-free test: power-of-two scaling is exact
    trace = np.trace(t0, axis1=1, axis2=2)
    tol = rtol * np.maximum(np.abs(trace), np.finfo(float).tiny)
    asym = np.abs(t0 - np.swapaxes(t0, 1, 2)).max(axis=(1, 2)) > tol
    s = 0.5 * trace[:, None, None] * np.eye(3) - 0.5 * (t0 + np.swapaxes(t0, 1, 2))
    low = np.linalg.eigvalsh(s).min(axis=1)
    return ~finite | asym | (trace < -tol) | (low < -tol)


def check_realisable(tensor: np.ndarray, *, subject: str | None = None) -> None:
    """Raise InertiaError naming the subject when the tensor is impossible."""
    problem = realisability_problem(tensor)
    if problem:
        raise InertiaError(problem, subject=subject, field="inertia")
