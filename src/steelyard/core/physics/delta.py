"""A roll-up with one row taken out, and any row put back in: O(1) per edit.

The item form previews every keystroke. Rolling 100,000 rows up again for
each key is O(n); instead the other rows are summed once (`rest_sums`) and
each candidate row is combined with them (`with_row`). The sums kept are the
ones `rollup` forms, about the rest's own CG so far datums keep their digits:
total mass M, CG c, S = Σ m d dᵀ (d = r − c) and Σ own. Adding a row of mass
m at r is the two-body combination (parallel axis): the new CG is
c + (m / M') (r − c) and S' = S + (M m / M') (r − c)(r − c)ᵀ, M' = M + m;
no Σ m r² − M c² difference is ever formed.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from steelyard.core.physics.rollup import _SUSPECT, MassProperties, _second_moments, _sym


@dataclass(frozen=True)
class RestSums:
    """Sums of every row but one (or of all rows), as the roll-up keeps them."""

    mass: float
    cg: np.ndarray  # (3,), meaningless when mass is 0
    s: np.ndarray  # (3, 3) Σ m d dᵀ about cg
    own: np.ndarray  # (3, 3) Σ own tensors


def rest_sums(mass: np.ndarray, cg: np.ndarray, own: np.ndarray, row: int | None = None,
              own_rows: np.ndarray | None = None) -> RestSums | None:
    """The sums of all rows of a state except `row` (None: all rows); None when they are not finite.

    Row `row` is given zero weight rather than cut out, so no (n, 3, 3) copy
    is made: its mass counts as 0 in both passes and its own tensor gets a
    zero weight in the Σ. With `own_rows` (as `rollup` takes it), `own` holds
    only those rows' tensors.
    """
    with np.errstate(over="ignore", invalid="ignore", under="ignore", divide="ignore"):
        mass = np.array(mass, dtype=float)  # a copy: the row is zeroed in it
        cg = np.asarray(cg, dtype=float).reshape(-1, 3)
        n = len(mass)
        rows = np.arange(n) if own_rows is None else np.asarray(own_rows, dtype=np.intp)
        own = np.asarray(own, dtype=float).reshape(len(rows), 9)
        weight = np.ones(len(rows))
        if row is not None:
            mass[row] = 0.0
            weight[rows == row] = 0.0
        own_sum = (weight @ own).reshape(3, 3) if len(rows) else np.zeros((3, 3))
        total = float(mass.sum())
        if total > 0.0 and math.isfinite(total):
            _first, c, s = _second_moments(mass, cg, total)
        else:
            c, s = np.zeros(3), np.zeros((3, 3))
    out = RestSums(total, c, s, own_sum)
    finite = math.isfinite(total) and np.isfinite(c).all() and np.isfinite(s).all() and np.isfinite(own_sum).all()
    return out if finite else None


def with_row(rest: RestSums, mass: float, cg, own) -> MassProperties | None:
    """The roll-up of the rest plus one row (mass as carried, CG, own tensor as carried).

    The same figures as `rollup` of all the rows, to its rounding. None when
    a figure is not finite: the caller rolls the whole state up instead (the
    full roll-up names the row that overflows).
    """
    r = np.asarray(cg, dtype=float).reshape(3)
    own_sum = rest.own + np.asarray(own, dtype=float).reshape(3, 3)
    with np.errstate(over="ignore", invalid="ignore", under="ignore", divide="ignore"):
        total = rest.mass + float(mass)
        if total <= 0.0:
            mp = MassProperties(total, np.full(3, np.nan), own_sum, own_sum.copy())
        else:
            if rest.mass > 0.0:
                d = r - rest.cg
                c = rest.cg + (float(mass) / total) * d
                s = rest.s + (rest.mass * float(mass) / total) * np.outer(d, d)
            else:
                c, s = r.copy(), np.zeros((3, 3))
            i_cg = _sym(own_sum + np.trace(s) * np.eye(3) - s)
            i_datum = i_cg + total * (float(c @ c) * np.eye(3) - np.outer(c, c))
            mp = MassProperties(total, c, i_cg, i_datum)
        if 0.0 < total < _SUSPECT or 0.0 < float(np.trace(mp.inertia_datum)) < _SUSPECT:
            return None  # near the subnormal range the full roll-up forms products on mantissas
        finite = (math.isfinite(mp.mass) and np.isfinite(mp.inertia_cg).all() and np.isfinite(mp.inertia_datum).all()
                  and (total <= 0.0 or np.isfinite(mp.cg).all()))
    return mp if finite else None
