"""Own inertia of standard solids from their dimensions.

Most ledger items are not measured on a swing rig: their own inertia is
estimated by treating the part as a cylinder, a box, a tank shell... This
module turns such a shape (SI dimensions, mass, symmetry axis) into its
inertia tensor about its own centroid. The item's `cg` is that centroid, so
no offset is applied here, and any `rotate` turns are applied later by
`model.Item.own_tensor`.

Every kind is symmetric enough that its products of inertia vanish in its
local frame, so the tensor is diagonal. For an axial kind the local symmetry
axis w is laid along body `axis` and the two cross directions u, v follow
cyclically (axis z: u = x, v = y; axis x: u = y, v = z; axis y: u = z, v = x),
which keeps the mapping a proper rotation. `box` and `ellipsoid` take their
three dimensions along body x, y, z and ignore `axis`.

Formulas: see docs/shapes.md (handbook closed forms about the centroid).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass

import numpy as np

from steelyard.core.errors import SteelyardError

AXES = {"x": 0, "y": 1, "z": 2}

#: per-unit-mass moments: (I_u, I_v, I_w) for axial kinds, (I_xx, I_yy, I_zz) otherwise
_Moments = Callable[[Mapping[str, object]], tuple[float, float, float]]


@dataclass(frozen=True)
class _Kind:
    params: dict[str, str]
    moments: _Moments
    axial: bool = True  # False: dimensions are along body x, y, z and `axis` is ignored
    may_be_zero: frozenset[str] = frozenset()


def _cylinder(p):
    r, h = p["radius"], p["length"]
    t = (3.0 * r * r + h * h) / 12.0
    return t, t, 0.5 * r * r


def _tube(p):
    ro, ri, h = p["outer_radius"], p["inner_radius"], p["length"]
    s = ro * ro + ri * ri
    t = (3.0 * s + h * h) / 12.0
    return t, t, 0.5 * s


def _thin_tube(p):
    r, h = p["radius"], p["length"]
    t = 0.5 * r * r + h * h / 12.0
    return t, t, r * r


def _rod(p):
    t = p["length"] ** 2 / 12.0
    return t, t, 0.0


def _sphere(p):
    i = 0.4 * p["radius"] ** 2
    return i, i, i


def _shell(p):
    i = 2.0 / 3.0 * p["radius"] ** 2
    return i, i, i


def _hollow_sphere(p):
    ro, ri = p["outer_radius"], p["inner_radius"]
    q = ri / ro
    # 2/5 (ro^5 - ri^5) / (ro^3 - ri^3), written so a thin wall keeps its digits
    i = 0.4 * ro * ro * (1 + q + q**2 + q**3 + q**4) / (1 + q + q**2)
    return i, i, i


def _hemisphere(p):
    r2 = p["radius"] ** 2
    # about the flat-face centre every axis has 2/5 r^2; the centroid is 3r/8 up
    return 83.0 / 320.0 * r2, 83.0 / 320.0 * r2, 0.4 * r2


def _cone(p):
    r2, h2 = p["radius"] ** 2, p["height"] ** 2
    t = 3.0 / 20.0 * r2 + 3.0 / 80.0 * h2
    return t, t, 0.3 * r2


def _disc(p):
    r2 = p["radius"] ** 2
    return 0.25 * r2, 0.25 * r2, 0.5 * r2


def _ring(p):
    r2 = p["radius"] ** 2
    return 0.5 * r2, 0.5 * r2, r2


def _torus(p):
    big2, a2 = p["major_radius"] ** 2, p["minor_radius"] ** 2
    t = 0.5 * big2 + 0.625 * a2
    return t, t, big2 + 0.75 * a2


def _plate(p):
    a, b = p["size"]  # a along u, b along v
    return b * b / 12.0, a * a / 12.0, (a * a + b * b) / 12.0


def _box(p):
    a, b, c = p["size"]
    return (b * b + c * c) / 12.0, (a * a + c * c) / 12.0, (a * a + b * b) / 12.0


def _ellipsoid(p):
    a, b, c = p["semi_axes"]
    return (b * b + c * c) / 5.0, (a * a + c * c) / 5.0, (a * a + b * b) / 5.0


def _point(p):
    return 0.0, 0.0, 0.0


_L = "length"
_KINDS: dict[str, _Kind] = {
    "point": _Kind({}, _point),
    "rod": _Kind({"length": _L}, _rod),
    "cylinder": _Kind({"radius": _L, "length": _L}, _cylinder),
    "tube": _Kind({"outer_radius": _L, "inner_radius": _L, "length": _L}, _tube,
                  may_be_zero=frozenset({"inner_radius"})),
    "thin_tube": _Kind({"radius": _L, "length": _L}, _thin_tube),
    "sphere": _Kind({"radius": _L}, _sphere),
    "shell": _Kind({"radius": _L}, _shell),
    "hollow_sphere": _Kind({"outer_radius": _L, "inner_radius": _L}, _hollow_sphere,
                           may_be_zero=frozenset({"inner_radius"})),
    "hemisphere": _Kind({"radius": _L}, _hemisphere),
    "cone": _Kind({"radius": _L, "height": _L}, _cone),
    "disc": _Kind({"radius": _L}, _disc),
    "ring": _Kind({"radius": _L}, _ring),
    "torus": _Kind({"major_radius": _L, "minor_radius": _L}, _torus),
    "plate": _Kind({"size": "length2"}, _plate),
    "box": _Kind({"size": "length3"}, _box, axial=False),
    "ellipsoid": _Kind({"semi_axes": "length3"}, _ellipsoid, axial=False),
}

#: kind -> {dimension parameter: "length" | "length2" | "length3"}; `axis` is not listed
SHAPE_PARAMS: dict[str, dict[str, str]] = {k: dict(v.params) for k, v in _KINDS.items()}

_WHAT = {"length": "a length", "length2": "a list of 2 lengths", "length3": "a list of 3 lengths"}


def _fail(message: str, param: str) -> SteelyardError:
    return SteelyardError(message, field=f"shape.{param}")


def _check_number(kind: str, param: str, label: str, value: object, zero_ok: bool) -> float:
    if isinstance(value, (bool, np.bool_)) or not isinstance(value, (int, float, np.integer, np.floating)):
        raise _fail(f"{kind} {label} must be a length, got {type(value).__name__}", param)
    v = float(value)
    if not math.isfinite(v):
        raise _fail(f"{kind} {label} must be finite, got {v!r}", param)
    if v < 0 or (v == 0 and not zero_ok):
        need = "zero or positive" if zero_ok else "positive"
        raise _fail(f"{kind} {label} must be {need}, got {v!r}", param)
    return v


def _check_value(kind: str, param: str, dim: str, value: object, zero_ok: bool) -> None:
    if dim == "length":
        _check_number(kind, param, param, value, zero_ok)
        return
    n = 2 if dim == "length2" else 3
    if isinstance(value, (str, bytes, Mapping)) or not hasattr(value, "__len__") or len(value) != n:
        raise _fail(f"{kind} {param} must be {_WHAT[dim]}", param)
    for i, v in enumerate(value):
        _check_number(kind, param, f"{param}[{i}]", v, zero_ok)


def validate_shape(kind: str, params: dict) -> None:
    """Raise SteelyardError (field "shape.<param>") unless the shape can exist.

    Params are SI floats (sequences for length2/length3). An `axis` entry, if
    present, is checked too, so callers may pass the whole shape table.
    """
    spec = _KINDS.get(kind) if isinstance(kind, str) else None
    if spec is None:
        raise SteelyardError(f"unknown shape kind {kind!r}; known kinds: {', '.join(_KINDS)}",
                             field="shape.kind")
    if not isinstance(params, Mapping):
        raise SteelyardError(f"{kind} dimensions must be a table, got {type(params).__name__}",
                             field="shape")
    for name in params:
        if name == "axis":
            _axis_index(params[name])
        elif name not in spec.params:
            takes = ", ".join(spec.params) or "no dimensions"
            raise _fail(f"{kind} takes no parameter {name!r} (it takes: {takes})", str(name))
    for name, dim in spec.params.items():
        if name not in params:
            raise _fail(f"{kind} needs {name} ({_WHAT[dim]})", name)
        _check_value(kind, name, dim, params[name], name in spec.may_be_zero)
    if kind in ("tube", "hollow_sphere") and params["inner_radius"] >= params["outer_radius"]:
        raise _fail(f"{kind} inner_radius ({float(params['inner_radius']):g} m) must be less "
                    f"than outer_radius ({float(params['outer_radius']):g} m)", "inner_radius")
    if kind == "torus" and params["minor_radius"] > params["major_radius"]:
        raise _fail(f"torus minor_radius ({float(params['minor_radius']):g} m) must not exceed "
                    f"major_radius ({float(params['major_radius']):g} m)", "minor_radius")


def _axis_index(axis: object) -> int:
    i = AXES.get(axis) if isinstance(axis, str) else None
    if i is None:
        raise SteelyardError(f"shape axis must be x, y or z, got {axis!r}", field="shape.axis")
    return i


def shape_tensor(kind: str, params: dict, axis: str, mass: float) -> np.ndarray:
    """Inertia tensor (3, 3) about the solid's centroid, symmetry axis along body `axis`."""
    validate_shape(kind, params)
    k = _axis_index(axis)
    m = float(mass)
    if not math.isfinite(m) or m < 0:
        raise SteelyardError(f"mass must be finite and not negative, got {mass!r}", field="mass")
    spec = _KINDS[kind]
    a, b, c = spec.moments(params)
    out = np.zeros((3, 3))
    if spec.axial:
        out[(k + 1) % 3, (k + 1) % 3] = m * a
        out[(k + 2) % 3, (k + 2) % 3] = m * b
        out[k, k] = m * c
    else:
        out[0, 0], out[1, 1], out[2, 2] = m * a, m * b, m * c
    return out
