"""Real roots of many quadratics at once, in the numerically stable form.

Where a loading path (added mass, a burn) meets an envelope edge is the root
of a quadratic per edge. The textbook formula loses every digit when b² ≫ 4ac,
so both roots come from q = −(b + sign(b)·√disc)/2: t₁ = q/a, t₂ = c/q.
"""

from __future__ import annotations

import numpy as np


def quadratic_roots(qa: np.ndarray, qb: np.ndarray, qc: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Both real roots of qa t² + qb t + qc per row (NaN where none; a linear row has one)."""
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        disc = qb * qb - 4.0 * qa * qc
        q = -0.5 * (qb + np.copysign(np.sqrt(np.maximum(disc, 0.0)), qb))
        lin = qa == 0
        r1 = np.where(lin, -qc / qb, q / qa)
        r2 = np.where(lin, np.nan, qc / q)
        real = lin | (disc >= 0)
    return np.where(real, r1, np.nan), np.where(real, r2, np.nan)
