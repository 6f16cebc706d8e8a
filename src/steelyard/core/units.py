"""The program's single unit registry and fast unit conversion.

Pint parses a unit string in tens of microseconds, far too slow to do per
field on a 100,000-item file. So: a file's bare numbers are converted in bulk
with one cached factor per (unit, dimension), and a value written as a string
with its unit ("41.5 lb") is parsed once per distinct string (cached).
"""

from __future__ import annotations

import math
import re
from fractions import Fraction
from functools import lru_cache

import pint

from .errors import UnitError

# Exact rational conversion factors: 1 lb is exactly 0.45359237 kg (NIST SP 811),
# and chains such as slug*ft**2 stay exact until the final rounding to float.
ureg = pint.UnitRegistry(non_int_type=Fraction)
Q_ = ureg.Quantity

#: dimension name -> (pint dimensionality, SI unit string)
DIMENSIONS: dict[str, tuple[str, str]] = {
    "mass": ("[mass]", "kg"),
    "length": ("[length]", "m"),
    "inertia": ("[mass] * [length] ** 2", "kg * m ** 2"),
    "volume": ("[length] ** 3", "m ** 3"),
    "density": ("[mass] / [length] ** 3", "kg / m ** 3"),
    "moment": ("[mass] * [length]", "kg * m"),
    "dimensionless": ("[]", ""),
}

#: display unit systems: dimension -> unit string
SYSTEMS: dict[str, dict[str, str]] = {
    "si": {"mass": "kg", "length": "m", "inertia": "kg*m**2", "moment": "kg*m",
           "volume": "L", "density": "kg/L"},
    "us": {"mass": "lb", "length": "in", "inertia": "lb*in**2", "moment": "lb*in",
           "volume": "gal", "density": "lb/gal"},
}

_NUMBER = r"[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?"
_TERM = re.compile(rf"\s*({_NUMBER})\s*([A-Za-z_][A-Za-z_0-9*/^ ]*?)\s*(?=$|{_NUMBER})")


def _dimensionality(dimension: str):
    try:
        return ureg.get_dimensionality(DIMENSIONS[dimension][0])
    except KeyError:  # programming error, not user input
        raise ValueError(f"unknown dimension {dimension!r}") from None


@lru_cache(maxsize=512)
def unit_factor(unit: str, dimension: str) -> float:
    """Factor that turns a number in `unit` into SI for `dimension`.

    Raises UnitError for an unknown unit or one of the wrong dimension.
    """
    if not isinstance(unit, str) or not unit.strip():
        raise UnitError(f"unit must be a non-empty string, got {unit!r}")
    try:
        q = Q_(Fraction(1), unit)
    except (pint.errors.UndefinedUnitError, pint.errors.DefinitionSyntaxError) as exc:
        raise UnitError(f"unknown unit {unit!r}") from exc
    except Exception as exc:  # pint raises assorted errors on odd strings
        raise UnitError(f"cannot read unit {unit!r} ({type(exc).__name__})") from exc
    if q.dimensionality != _dimensionality(dimension):
        raise UnitError(f"unit {unit!r} is not a {dimension} unit")
    factor = float(q.to(DIMENSIONS[dimension][1]).magnitude)
    if not math.isfinite(factor) or factor <= 0:
        raise UnitError(f"unit {unit!r} has no usable size")
    return factor


@lru_cache(maxsize=65536)
def parse_quantity(text: str, dimension: str) -> float:
    """Parse "41.5 lb" (or "3 ft 2 in") into an SI float of `dimension`.

    A bare number in the string is rejected: its unit would be a guess.
    """
    s = text.strip()
    if not s:
        raise UnitError("empty value")
    terms = _TERM.findall(s)
    if len(terms) > 1 and "".join(f"{n}{u}" for n, u in terms).replace(" ", "") == s.replace(" ", ""):
        # "3 ft 2 in": a sum of terms of one dimension
        total = 0.0
        for number, unit in terms:
            total += float(number) * unit_factor(unit.strip(), dimension)
        return _finite(total, text)
    try:
        q = ureg.parse_expression(s)
    except Exception as exc:
        raise UnitError(f"cannot read {text!r} as a {dimension}") from exc
    if not isinstance(q, pint.Quantity):
        raise UnitError(f"{text!r} has no unit; write e.g. '{text} {DIMENSIONS[dimension][1]}'")
    if q.dimensionality != _dimensionality(dimension):
        raise UnitError(f"{text!r} is not a {dimension}")
    try:
        value = float(q.to(DIMENSIONS[dimension][1]).magnitude)
    except OverflowError:
        raise UnitError(f"{text!r} is too large to represent") from None
    except (TypeError, ValueError) as exc:
        raise UnitError(f"cannot read {text!r} as a number") from exc
    return _finite(value, text)


def _finite(value: float, text: str) -> float:
    if not math.isfinite(value):
        raise UnitError(f"{text!r} is not a finite number")
    return value


def to_si(value: object, dimension: str, file_unit: str) -> float:
    """One value from a file: a bare number in the file's unit, or a string with its unit."""
    if isinstance(value, bool):
        raise UnitError(f"expected a {dimension}, got a boolean")
    if isinstance(value, (int, float)):
        out = float(value) * unit_factor(file_unit, dimension)
        return _finite(out, repr(value))
    if isinstance(value, str):
        return parse_quantity(value, dimension)
    raise UnitError(f"expected a {dimension} (number or string with unit), got {type(value).__name__}")


def from_si(value: float, dimension: str, unit: str) -> float:
    """Express an SI value in `unit` (for display and saving)."""
    return value / unit_factor(unit, dimension)


def system_unit(system: str, dimension: str) -> str:
    try:
        return SYSTEMS[system][dimension]
    except KeyError:
        raise UnitError(f"unknown unit system {system!r} (use si or us)") from None
