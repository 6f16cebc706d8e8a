"""Moving a table held as written to a file with other units: every bare number gets its unit.

Tables beyond v1 are kept as the user wrote them, so a bare number means "in
this file's units". A snapshot (written in SI) or any other file that takes
a table from this one must keep its meaning: `pin_units` rewrites each bare
number of a known dimension as a string with the source file's unit
("114.0 in"), which every reader accepts and converts exactly as before.
Numbers that are fractions, counts or already strings are left alone.
"""

from __future__ import annotations

from collections.abc import Mapping

from steelyard.core.document.model import FileUnits

#: key -> dimension of the numbers under it, per table (nested tables and lists inherit)
DIMENSIONS: dict[str, dict[str, str]] = {
    "mac": {"lemac": "length", "length": "length"},
    "limit": {"max_mass": "mass", "min_mass": "mass", "max_inertia": "inertia", "min_inertia": "inertia",
              "max_cg_offset": "length", "through": "length"},
    "allocation": {"mass": "mass"},
    "weighing": {"at": "length", "reading": "mass", "tare": "mass", "vertical_cg": "length", "mass": "mass",
                 "volume": "volume", "density": "density"},
    "tolerance": {"mass": "mass", "cg": "length"},
    "assembly": {"at": "length"},
}


def unit_for(dimension: str, units: FileUnits) -> str:
    return {"mass": units.mass, "length": units.length, "inertia": units.inertia,
            "volume": units.volume or "m**3", "density": units.density_unit}[dimension]


def _pin(value: object, unit: str) -> object:
    if type(value) in (int, float):
        return f"{float(value)!r} {unit}"
    if isinstance(value, list):
        return [_pin(v, unit) for v in value]
    if isinstance(value, Mapping):
        return {k: _pin(v, unit) for k, v in value.items()}
    return value


def pin_units(table: Mapping, kind: str, units: FileUnits) -> dict:
    """A copy of `table` (of the kind named in DIMENSIONS) with bare numbers carrying `units`."""
    dims = DIMENSIONS[kind]
    out = {}
    for k, v in table.items():
        if k in dims:
            out[k] = _pin(v, unit_for(dims[k], units))
        elif k in ("point", "on_board", "missing") and isinstance(v, list):
            out[k] = [pin_units(e, kind, units) if isinstance(e, Mapping) else e for e in v]
        else:
            out[k] = v
    return out


def pin_cg_table(rows, units: FileUnits) -> list:
    """`cg_table` rows [fraction, x, y, z]: the fraction stays a number, the lengths get the unit."""
    return [[r[0], *(_pin(v, units.length) for v in r[1:])] for r in rows]


# ------------------------------------------------------------ new file units (convert-units)
def _unit_factor(unit: str, dimension: str) -> float:
    from steelyard.core.units import unit_factor

    return unit_factor(unit, dimension)


def convert_number(x: float, dimension: str, old: str, new: str) -> float:
    """A bare number in `old` rewritten in `new` so that a reader gets the same SI value.

    The reader computes float(text) * factor; among short decimal roundings of the
    quotient and its neighbouring floats, the shortest that reads back within one ulp
    of the same SI float wins (so converting back restores the text), else the nearest."""
    import math

    fo, fn = _unit_factor(old, dimension), _unit_factor(new, dimension)
    si = float(x) * fo
    v = si / fn
    candidates = [float(f"{v:.{d}g}") for d in range(6, 18)]
    up = down = v
    for _ in range(3):
        up, down = math.nextafter(up, math.inf), math.nextafter(down, -math.inf)
        candidates += [up, down]
    # the shortest text that reads back within one ulp of the SI value: a factor such as 1e-9 is not
    # exact in binary, so insisting on the identical float would write 0.6000000000000001 for 0.6
    near = [c for c in candidates if abs(c * fn - si) <= math.ulp(si)]
    if near:
        return min(near, key=lambda c: (len(repr(c)), abs(c * fn - si)))
    return min(candidates, key=lambda c: abs(c * fn - si))


def _convert(value: object, dimension: str, old: FileUnits, new: FileUnits) -> object:
    if type(value) in (int, float):
        out = convert_number(value, dimension, unit_for(dimension, old), unit_for(dimension, new))
        return int(out) if type(value) is int and out == int(out) and abs(out) < 2**53 else out
    if isinstance(value, list):
        return [_convert(v, dimension, old, new) for v in value]
    if isinstance(value, Mapping):
        return {k: _convert(v, dimension, old, new) for k, v in value.items()}
    return value


def convert_table(table: Mapping, kind: str, old: FileUnits, new: FileUnits) -> dict:
    """A copy of `table` (a kind of DIMENSIONS) with its bare numbers rewritten from `old` units into `new`."""
    dims = DIMENSIONS[kind]
    out = {}
    for k, v in table.items():
        if k in dims:
            out[k] = _convert(v, dims[k], old, new)
        elif k in ("point", "on_board", "missing") and isinstance(v, list):
            out[k] = [convert_table(e, kind, old, new) if isinstance(e, Mapping) else e for e in v]
        else:
            out[k] = v
    return out


def convert_cg_table(rows, old: FileUnits, new: FileUnits) -> list:
    """`cg_table` rows [fraction, x, y, z] with the lengths rewritten from `old` units into `new`."""
    return [[r[0], *(_convert(v, "length", old, new) for v in r[1:])] for r in rows]
