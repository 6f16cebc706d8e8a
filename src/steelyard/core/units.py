"""The program's single unit registry and fast unit conversion.

Pint parses a unit string in tens of microseconds, far too slow to do per
field on a 100,000-item file. So: a file's bare numbers are converted in bulk
with one cached factor per (unit, dimension), and a value written as a string
with its unit ("41.5 lb") is parsed once per distinct string (cached).

Building the registry itself takes about half a second, so it is built only
when a unit outside the table of common exact factors below is met; a test
checks every table entry against pint.
"""

from __future__ import annotations

import math
import re
from fractions import Fraction
from functools import lru_cache

import pint

from steelyard.core.errors import SteelyardError, UnitError, said

_REGISTRY: pint.UnitRegistry | None = None


def registry() -> pint.UnitRegistry:
    """The one registry, built on first use. Its factors are exact rationals: 1 lb is
    exactly 0.45359237 kg (NIST SP 811), and chains such as slug*ft**2 stay exact
    until the final rounding to float."""
    global _REGISTRY
    if _REGISTRY is None:
        _REGISTRY = pint.UnitRegistry(non_int_type=Fraction)
    return _REGISTRY


def __getattr__(name: str):  # `from .units import ureg, Q_` builds the registry lazily
    if name == "ureg":
        return registry()
    if name == "Q_":
        return registry().Quantity
    raise AttributeError(name)


_LB = Fraction("0.45359237")  # NIST SP 811, exact
_IN = Fraction("0.0254")  # NIST SP 811, exact
_FT = 12 * _IN
_SLUG = _LB * Fraction("9.80665") / _FT  # lbf·s²/ft
_GAL = 231 * _IN**3  # US gallon
#: unit text -> (dimension, exact SI factor); each entry is checked against pint in the tests
EXACT: dict[str, tuple[str, Fraction]] = {
    "kg": ("mass", Fraction(1)), "g": ("mass", Fraction(1, 1000)), "t": ("mass", Fraction(1000)),
    "lb": ("mass", _LB), "oz": ("mass", _LB / 16), "slug": ("mass", _SLUG),
    "m": ("length", Fraction(1)), "mm": ("length", Fraction(1, 1000)), "cm": ("length", Fraction(1, 100)),
    "in": ("length", _IN), "ft": ("length", _FT),
    "kg*m**2": ("inertia", Fraction(1)), "kg*mm**2": ("inertia", Fraction(1, 10**6)),
    "g*cm**2": ("inertia", Fraction(1, 10**7)), "lb*in**2": ("inertia", _LB * _IN**2),
    "lb*ft**2": ("inertia", _LB * _FT**2), "slug*ft**2": ("inertia", _SLUG * _FT**2),
    "m**3": ("volume", Fraction(1)), "L": ("volume", Fraction(1, 1000)), "gal": ("volume", _GAL),
    "kg/m**3": ("density", Fraction(1)), "kg/L": ("density", Fraction(1000)), "lb/gal": ("density", _LB / _GAL),
}
_SIMPLE = re.compile(r"^\s*([-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?)\s*([A-Za-z*/0-9]+)\s*$")

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
        return registry().get_dimensionality(DIMENSIONS[dimension][0])
    except KeyError:  # programming error, not user input
        raise ValueError(f"unknown dimension {dimension!r}") from None


@lru_cache(maxsize=512)
def unit_factor(unit: str, dimension: str) -> float:
    """Factor that turns a number in `unit` into SI for `dimension`.

    Raises UnitError for an unknown unit or one of the wrong dimension.
    """
    if not isinstance(unit, str) or not unit.strip():
        raise UnitError(f"unit must be a non-empty string, got {unit!r}")
    known = EXACT.get(unit.replace(" ", ""))
    if known is not None:
        if known[0] != dimension:
            raise UnitError(f"unit {unit!r} is not a {dimension} unit")
        return float(known[1])
    try:
        q = registry().Quantity(Fraction(1), unit)
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
    simple = _SIMPLE.match(s)
    if simple and simple.group(2) in EXACT:
        dim, factor = EXACT[simple.group(2)]
        if dim != dimension:
            raise UnitError(f"{text!r} is not a {dimension}")
        try:
            return _finite(float(Fraction(simple.group(1)) * factor), text)
        except OverflowError:
            raise UnitError(f"{text!r} is too large to represent") from None
    terms = _TERM.findall(s)
    if len(terms) > 1 and "".join(f"{n}{u}" for n, u in terms).replace(" ", "") == s.replace(" ", ""):
        # "3 ft 2 in": a sum of terms of one dimension
        total = 0.0
        for number, unit in terms:
            total += float(number) * unit_factor(unit.strip(), dimension)
        return _finite(total, text)
    try:
        q = registry().parse_expression(s)
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
        try:
            out = float(value) * unit_factor(file_unit, dimension)
        except OverflowError:
            raise UnitError(f"{str(value)[:20]}… is too large to represent") from None
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


def field_to_si(value: object, dimension: str, file_unit: str, *, subject: str, field: str) -> float:
    """One value of a named field to SI, with any problem located at that subject and field."""
    if type(value) is bool:
        raise SteelyardError(f"must be a {dimension}, got {said(value)}", subject=subject, field=field)
    try:
        return to_si(value, dimension, file_unit)
    except UnitError as exc:
        raise exc.located(subject=subject, field=field)
    except (OverflowError, ValueError, TypeError):  # e.g. an integer too large for a float
        raise SteelyardError(f"must be a finite {dimension}, got {said(value)}", subject=subject,
                             field=field) from None
