"""The program's single unit registry and fast unit conversion.

Pint parses a unit string in tens of microseconds, far too slow to do per
field on a 100,000-item file. So: a file's bare numbers are converted in bulk
with one cached factor per (unit, dimension), and a value written as a string
with its unit ("41.5 lb") is parsed once per distinct string (cached).

Building the registry itself takes about half a second, so it is built only
when a unit outside the table of common exact factors below is met; a test
checks every table entry against pint.

Text is read strictly, because pint reads what a person mistypes as
something else ("41,5 lb" as 415 lb, "3 2 in" as 6 in, "1 kg 2" as 2 kg): a
value is one ASCII number and one unit (or, for a length, a sum such as
"3 ft 2 in"), and anything else is refused with the reason.
"""

from __future__ import annotations

import math
import re
from fractions import Fraction
from functools import lru_cache
from typing import TYPE_CHECKING

from steelyard.core.errors import SteelyardError, UnitError, said

if TYPE_CHECKING:  # pint itself costs a third of a second to import: only when a unit is off the table
    import pint

_REGISTRY: pint.UnitRegistry | None = None


def registry() -> pint.UnitRegistry:
    """The one registry, built on first use. Its factors are exact rationals: 1 lb is
    exactly 0.45359237 kg (NIST SP 811), and chains such as slug*ft**2 stay exact
    until the final rounding to float."""
    global _REGISTRY
    if _REGISTRY is None:
        import pint

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
_MASSES = {"kg": Fraction(1), "g": Fraction(1, 1000), "t": Fraction(1000), "lb": _LB, "oz": _LB / 16,
           "slug": _SLUG}
_LENGTHS = {"m": Fraction(1), "mm": Fraction(1, 1000), "cm": Fraction(1, 100), "in": _IN, "ft": _FT}
#: unit text -> (dimension, exact SI factor): the common units, so that a file naming them (and every
#: bare number in it) never needs pint; each entry is checked against pint and NIST SP 811 in the tests
EXACT: dict[str, tuple[str, Fraction]] = {
    **{m: ("mass", f) for m, f in _MASSES.items()},
    **{n: ("length", f) for n, f in _LENGTHS.items()},
    **{f"{m}*{n}**2": ("inertia", fm * fl**2) for m, fm in _MASSES.items() for n, fl in _LENGTHS.items()},
    **{f"{m}*{n}": ("moment", fm * fl) for m, fm in _MASSES.items() for n, fl in _LENGTHS.items()},
    "m**3": ("volume", Fraction(1)), "L": ("volume", Fraction(1, 1000)), "gal": ("volume", _GAL),
    "kg/m**3": ("density", Fraction(1)), "kg/L": ("density", Fraction(1000)), "lb/gal": ("density", _LB / _GAL),
}

#: dimension name -> (pint dimensionality, SI unit string)
DIMENSIONS: dict[str, tuple[str, str]] = {
    "mass": ("[mass]", "kg"),
    "length": ("[length]", "m"),
    "inertia": ("[mass] * [length] ** 2", "kg * m ** 2"),
    "volume": ("[length] ** 3", "m ** 3"),
    "density": ("[mass] / [length] ** 3", "kg / m ** 3"),
    "moment": ("[mass] * [length]", "kg * m"),
    "force": ("[mass] * [length] / [time] ** 2", "N"),
    "dimensionless": ("[]", ""),
}

#: display unit systems: dimension -> unit string
SYSTEMS: dict[str, dict[str, str]] = {
    "si": {"mass": "kg", "length": "m", "inertia": "kg*m**2", "moment": "kg*m",
           "volume": "L", "density": "kg/L"},
    "us": {"mass": "lb", "length": "in", "inertia": "lb*in**2", "moment": "lb*in",
           "volume": "gal", "density": "lb/gal"},
}


#: a number as a person types it: ASCII digits only (float() also takes "1_5" and other scripts' digits)
NUMBER = r"[-+]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][-+]?[0-9]+)?"
_NUMBER = re.compile(NUMBER)
_LEAD = re.compile(rf"({NUMBER})\s*")
_UNSIGNED = r"(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][-+]?[0-9]+)?"
_SUM_TERM = re.compile(rf"({_UNSIGNED})\s*([A-Za-z_]+)\s*")
_SUM = re.compile(rf"(?:{_UNSIGNED}\s*[A-Za-z_]+\s*){{2,}}")
_DECIMAL_COMMA = re.compile(r"[0-9],[0-9]")
_THOUSANDS = re.compile(r"[0-9],[0-9]{3}(?![0-9])")
_EXPONENT = re.compile(r"(?:\*\*|\^)\s*[-+]?[0-9]+")
_DIGIT = re.compile(r"\d")  # any script's digit: none belongs in a unit once exponents are gone
_OPERATORS = re.compile(r"\s*(\*\*|[*/^()])\s*")
_NONZERO = re.compile(r"[1-9]")
#: what a value of each dimension looks like, for messages
EXAMPLES = {"mass": "41.5 lb", "length": "122 in", "inertia": "0.8 slug*ft**2", "volume": "30 gal",
            "density": "6 lb/gal", "moment": "120 lb*in", "force": "650 lbf", "dimensionless": "12 %"}


def _dimensionality(dimension: str):
    try:
        return registry().get_dimensionality(DIMENSIONS[dimension][0])
    except KeyError:  # programming error, not user input
        raise ValueError(f"unknown dimension {dimension!r}") from None


@lru_cache(maxsize=512)
def exact_factor(unit: str, dimension: str) -> Fraction:
    """Exact rational factor that turns a number in `unit` into SI for `dimension`.

    Raises UnitError for an unknown unit, one of the wrong dimension, or one with
    a number in it ("kg 2" is pint's kg times 2: a typo, never a unit).
    """
    if not isinstance(unit, str) or not unit.strip():
        raise UnitError(f"unit must be a non-empty string, got {said(unit)}")
    known = EXACT.get(_OPERATORS.sub(r"\1", unit.strip()).replace("^", "**"))
    if known is not None:
        if known[0] != dimension:
            raise UnitError(f"unit {said(unit)} is not a {dimension} unit")
        return known[1]
    if _DIGIT.search(_EXPONENT.sub("", unit)):
        raise UnitError(f"unit {said(unit)} has a number in it; write one number, then its unit")
    ureg = registry()
    import pint

    try:
        q = ureg.Quantity(Fraction(1), unit)
    except (pint.errors.UndefinedUnitError, pint.errors.DefinitionSyntaxError) as exc:
        raise UnitError(f"unknown unit {said(unit)}") from exc
    except Exception as exc:  # pint raises assorted errors on odd strings
        raise UnitError(f"cannot read unit {said(unit)} ({type(exc).__name__})") from exc
    if q.dimensionality != _dimensionality(dimension):
        raise UnitError(f"unit {said(unit)} is not a {dimension} unit")
    try:
        factor = Fraction(q.to(DIMENSIONS[dimension][1]).magnitude)
        size = float(factor)
    except (TypeError, ValueError, OverflowError, ZeroDivisionError):
        size = math.nan
    if not math.isfinite(size) or size <= 0:
        raise UnitError(f"unit {said(unit)} has no usable size")
    return factor


@lru_cache(maxsize=512)
def unit_factor(unit: str, dimension: str) -> float:
    """Factor that turns a number in `unit` into SI for `dimension` (exact_factor, rounded once)."""
    return float(exact_factor(unit, dimension))


def _decimal(number: str) -> Fraction | None:
    """The exact value of a number's text; None for spellings too long to expand cheaply
    ("1e999999999" would build a billion-digit integer)."""
    _, _, exponent = number.lower().partition("e")
    if len(number) > 60 or (exponent and (len(exponent) > 5 or abs(int(exponent)) > 400)):
        return None
    return Fraction(number)


def _checked(value: float, number: str, text: str) -> float:
    """`value` read from `number`; refuse what a float cannot hold instead of turning it into inf or 0."""
    if not math.isfinite(value):
        raise UnitError(f"{said(text)} is too large to represent")
    if value == 0.0 and _NONZERO.search(number.lower().partition("e")[0]):
        raise UnitError(f"{said(text)} is too small to represent (it would read as 0)")
    return value


def _times(number: str, factor: Fraction, text: str) -> float:
    exact = _decimal(number)
    try:
        value = float(number) * float(factor) if exact is None else float(exact * factor)
    except OverflowError:
        value = math.inf
    return _checked(value, number, text)


def number_problem(text: str) -> str | None:
    """Why `text` is not a plain number ("41,5", "1_5", "٤٢", "nan"), or None when it is one."""
    s = text.strip()
    if _NUMBER.fullmatch(s):
        return None
    if _DECIMAL_COMMA.search(s):
        return _comma_message(text, s)
    if s.lower().lstrip("+-") in ("inf", "infinity", "nan"):
        return f"must be a finite number, got {said(text)}"
    return f"must be a number written in ASCII digits (such as 41.5 or -3e2), got {said(text)}"


def _comma_message(text: str, s: str) -> str:
    if _THOUSANDS.search(s):
        return f"{said(text)}: commas are not read in numbers; use a decimal point (41.5) and no thousands separator"
    return f"{said(text)}: use a decimal point: {s.replace(',', '.')}"


def parse_number(text: str) -> float:
    """A bare number as typed ("-1e3", "41.5"), strictly: ASCII digits, a decimal point, no
    underscores, and nothing that would silently become inf or 0. Raises UnitError saying why."""
    problem = number_problem(text)
    if problem:
        raise UnitError(problem)
    s = text.strip()
    return _checked(float(s), s, text)


@lru_cache(maxsize=65536)
def parse_quantity(text: str, dimension: str) -> float:
    """Parse one number and its unit ("41.5 lb") into an SI float of `dimension`.

    A length may also be a sum of unsigned terms, largest unit first ("3 ft 2 in").
    Anything else is refused with the reason: a bare number (its unit would be a
    guess), a decimal comma, a second number ("3 2 in", "1 kg 2"), a minus in
    front of a sum ("-3 ft 2 in": is the 2 in added or taken away?).
    """
    s = text.strip()
    if not s:
        raise UnitError("empty value")
    example = EXAMPLES.get(dimension, f"1 {DIMENSIONS[dimension][1]}")
    if _DECIMAL_COMMA.search(s):
        raise UnitError(_comma_message(text, s))
    lead = _LEAD.match(s)
    if lead is None:
        if s.split()[0].lower().lstrip("+-") in ("inf", "infinity", "nan"):
            raise UnitError(f"{said(text)} is not a finite number")
        raise UnitError(f"{said(text)} must start with a number in ASCII digits, e.g. '{example}'")
    number, unit = lead.group(1), s[lead.end():]
    if not unit:
        if dimension == "dimensionless":
            return _checked(float(number), number, text)
        raise UnitError(f"{said(text)} has no unit; write e.g. '{s} {DIMENSIONS[dimension][1]}'")
    if _DIGIT.search(_EXPONENT.sub("", unit)):
        return _sum(s, text, dimension, example)
    try:
        factor = exact_factor(unit, dimension)
    except UnitError as exc:
        raise UnitError(f"{said(text)}: {exc.message}") from None
    return _times(number, factor, text)


def _sum(s: str, text: str, dimension: str, example: str) -> float:
    """ "3 ft 2 in": unsigned terms, each unit smaller than the one before."""
    signed = s[0] in "+-"
    body = s[1:].lstrip() if signed else s
    if dimension != "length" or not _SUM.fullmatch(body):
        also = " (or a sum of lengths such as '3 ft 2 in')" if dimension == "length" else ""
        raise UnitError(f"{said(text)}: write one number and one unit, e.g. '{example}'{also}")
    terms = _SUM_TERM.findall(body)
    try:
        factors = [exact_factor(unit, "length") for _, unit in terms]
    except UnitError as exc:
        raise UnitError(f"{said(text)}: {exc.message}") from None
    if any(a <= b for a, b in zip(factors, factors[1:])):
        raise UnitError(f"{said(text)}: in a sum of lengths each unit must be smaller than the one before, "
                        "e.g. '3 ft 2 in'")
    exact = [_decimal(n) for n, _ in terms]
    if any(x is None for x in exact):
        raise UnitError(f"{said(text)}: write one number and one unit, e.g. '{example}'")
    total = sum((x * f for x, f in zip(exact, factors)), Fraction(0))
    if s[0] == "-":
        last = total / factors[-1]
        shown = str(last.numerator) if last.denominator == 1 else f"{float(last):.12g}"
        raise UnitError(f"{said(text)}: a minus in front of a sum of lengths is ambiguous; write one number "
                        f"and one unit, e.g. '-{shown} {terms[-1][1]}'")
    try:
        value = float(total)
    except OverflowError:
        value = math.inf
    return _checked(value, "".join(n for n, _ in terms), text)


def to_si(value: object, dimension: str, file_unit: str) -> float:
    """One value from a file: a bare number in the file's unit, or a string with its unit."""
    if isinstance(value, bool):
        raise UnitError(f"expected a {dimension}, got a boolean")
    if isinstance(value, (int, float)):
        try:
            out = float(value) * unit_factor(file_unit, dimension)
        except OverflowError:
            raise UnitError(f"{str(value)[:20]}… is too large to represent") from None
        if not math.isfinite(out):
            raise UnitError(f"{said(value)} is not a finite number")
        if out == 0.0 and value != 0:
            raise UnitError(f"{said(value)} {file_unit} is too small to represent (it would read as 0)")
        return out
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
