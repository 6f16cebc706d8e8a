"""Rotations of an item's own shape or inertia about the body axes.

A `rotate` list such as ``[["z", 10.0], ["x", -5.0]]`` means: turn the part
right-handedly by 10° about the body z axis, then by −5° about the body x
axis (fixed, extrinsic axes, applied left to right). The combined matrix is
R = R_n ⋯ R_2 R_1 and maps local vectors to body vectors, v_body = R v_local.
"""

from __future__ import annotations

import math
from collections.abc import Iterable

import numpy as np

from steelyard.core.errors import SteelyardError

AXES = {"x": 0, "y": 1, "z": 2}


def axis_rotation(axis: str, degrees: float) -> np.ndarray:
    """Right-handed rotation by `degrees` about one body axis."""
    if axis not in AXES:
        raise SteelyardError(f"rotation axis must be x, y or z, got {axis!r}", field="rotate")
    a = math.radians(degrees)
    c, s = math.cos(a), math.sin(a)
    i = AXES[axis]
    j, k = (i + 1) % 3, (i + 2) % 3
    r = np.eye(3)
    r[j, j], r[j, k], r[k, j], r[k, k] = c, -s, s, c
    return r


def rotation_matrix(turns: Iterable[tuple[str, float]]) -> np.ndarray:
    """Compose turns about fixed body axes, first turn applied first."""
    r = np.eye(3)
    for axis, degrees in turns:
        r = axis_rotation(axis, degrees) @ r
    return r
