"""When two SI values count as the same in a diff.

Values converted from different units land a few ulps apart (12 in and 1 ft
are one ulp apart as doubles), so numbers are equal when they differ by at
most `ULPS` units in the last place of the larger magnitude; strings,
booleans and integers compare exactly. One rule for items and definitions.
"""

from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np

#: Equality tolerance for SI numbers, in units in the last place of the larger magnitude.
ULPS = 8


def close(a, b) -> np.ndarray:
    """Elementwise: equal within ULPS ulps of the larger magnitude (NaN equals NaN)."""
    a = np.asarray(a, dtype=float)
    b = np.asarray(b, dtype=float)
    with np.errstate(invalid="ignore", over="ignore"):
        tol = ULPS * np.spacing(np.maximum(np.abs(a), np.abs(b)))
        return (a == b) | (np.abs(a - b) <= tol) | (np.isnan(a) & np.isnan(b))


def same(a, b) -> bool:
    """Loose equality of nested values (numbers within ULPS, everything else exactly)."""
    if isinstance(a, bool) or isinstance(b, bool) or isinstance(a, str) or isinstance(b, str):
        return type(a) is type(b) and a == b
    if isinstance(a, (int, float)) and isinstance(b, (int, float)):
        if a == b or (math.isnan(a) and math.isnan(b)):
            return True
        return abs(a - b) <= ULPS * math.ulp(max(abs(a), abs(b)))
    if isinstance(a, (list, tuple)) and isinstance(b, (list, tuple)):
        return len(a) == len(b) and all(same(x, y) for x, y in zip(a, b))
    if isinstance(a, Mapping) and isinstance(b, Mapping):
        return a.keys() == b.keys() and all(same(a[k], b[k]) for k in a)
    return a == b
