"""Unit factors against NIST SP 811 (Appendix B) exact definitions.

Exact: 1 lb = 0.45359237 kg, 1 in = 0.0254 m, 1 ft = 0.3048 m,
g_n = 9.80665 m/s², 1 US gal = 231 in³. Derived factors are recomputed here
with exact rational arithmetic and compared after one rounding to float.
"""

from fractions import Fraction as F

import pytest

from steelyard.core.errors import UnitError
from steelyard.core.units import parse_quantity, to_si, unit_factor

LB = F("0.45359237")  # NIST SP 811, exact
IN = F("0.0254")  # NIST SP 811, exact
FT = F("0.3048")  # NIST SP 811, exact
GN = F("9.80665")  # standard gravity, exact
SLUG = LB * GN / FT  # 1 slug = 1 lbf·s²/ft (derived, exact)


@pytest.mark.parametrize("unit,dim,exact", [
    ("lb", "mass", LB),
    ("in", "length", IN),
    ("ft", "length", FT),
    ("slug", "mass", SLUG),
    ("lb*in**2", "inertia", LB * IN**2),  # derived; SP 811 prints 2.926397 E-04
    ("slug*ft**2", "inertia", SLUG * FT**2),  # derived; SP 811 prints 1.355818
    ("lb*ft**2", "inertia", LB * FT**2),  # derived; SP 811 prints 4.214011 E-02
    ("lbf*in*s**2", "inertia", LB * GN * IN),  # derived: lbf·s²·in = lb·g_n·in (kg·m²)
    ("gal", "volume", 231 * IN**3),  # US gallon = 231 in³, exact
])
def test_factor_is_the_correctly_rounded_exact_value(unit, dim, exact):
    assert unit_factor(unit, dim) == float(exact)


def test_printed_sp811_values_agree():
    # NIST SP 811 Appendix B prints these to 7 significant figures.
    assert unit_factor("slug*ft**2", "inertia") == pytest.approx(1.355818, rel=5e-7)
    assert unit_factor("lb*ft**2", "inertia") == pytest.approx(4.214011e-2, rel=5e-7)
    assert unit_factor("lb*in**2", "inertia") == pytest.approx(2.926397e-4, rel=5e-7)


def test_quantity_strings():
    assert parse_quantity("41.5 lb", "mass") == float(F("41.5") * LB)
    assert parse_quantity("122 in", "length") == float(122 * IN)
    assert parse_quantity("0.8 slug*ft**2", "inertia") == pytest.approx(float(F("0.8") * SLUG * FT**2), rel=1e-15)
    # "3 ft 2 in" is a sum of two lengths (38 in)
    assert parse_quantity("3 ft 2 in", "length") == pytest.approx(float(38 * IN), rel=1e-15)


def test_bare_numbers_use_the_file_unit():
    assert to_si(2, "mass", "lb") == float(2 * LB)
    assert to_si("2 kg", "mass", "lb") == 2.0


@pytest.mark.parametrize("text,dim", [("12 m", "mass"), ("12", "mass"), ("12 blorps", "mass"),
                                      ("", "length"), ("1e400 kg", "mass"), ("3 kg", "length")])
def test_bad_quantities_are_unit_errors(text, dim):
    with pytest.raises(UnitError):
        parse_quantity(text, dim)


def test_boolean_is_not_a_mass():
    with pytest.raises(UnitError):
        to_si(True, "mass", "kg")


def test_unit_factor_rejects_wrong_dimension():
    with pytest.raises(UnitError, match="not a mass unit"):
        unit_factor("m", "mass")


def test_exact_table_agrees_with_pint():
    # The fast table of common units must give exactly what pint (exact rationals) gives.
    from fractions import Fraction

    from steelyard.core.units import DIMENSIONS, EXACT, registry

    reg = registry()
    for unit, (dim, factor) in EXACT.items():
        q = reg.Quantity(Fraction(1), unit)
        assert q.dimensionality == reg.get_dimensionality(DIMENSIONS[dim][0]), unit
        assert Fraction(q.to(DIMENSIONS[dim][1]).magnitude) == factor, unit


def test_fast_string_path_matches_pint():
    # reference: pint with exact rational factors
    from fractions import Fraction

    from steelyard.core.units import registry

    si = {"mass": "kg", "length": "m", "density": "kg/m**3", "volume": "m**3", "inertia": "kg*m**2"}
    for text, dim in [("41.5 lb", "mass"), ("122 in", "length"), ("-3.25e-2 ft", "length"),
                      ("6 lb/gal", "density"), ("30 gal", "volume"), ("0.8 slug*ft**2", "inertia")]:
        q = registry().parse_expression(text)
        assert parse_quantity(text, dim) == float(Fraction(q.to(si[dim]).magnitude)), text


def test_exact_table_agrees_with_nist_sp811():
    # Every entry of the fast table (what a file naming a common unit uses instead of pint), rebuilt
    # from NIST SP 811 Appendix B's exact definitions (tests/support/units.py) by reading the unit text here.
    import re

    from support.units import FT, GAL, IN, LB, OZ, PREFIXED, SLUG

    from steelyard.core.units import EXACT

    atoms = {"kg": F(1), "m": F(1), "lb": LB, "oz": OZ, "slug": SLUG, "in": IN, "ft": FT, "gal": GAL, **PREFIXED}

    def factor(text: str) -> F:
        num, _, den = text.partition("/")
        out = F(1)
        for part, sign in ((num, 1), (den, -1)):
            for name, power in re.findall(r"([A-Za-z]+)(?:\*\*(\d+))?", part):
                out *= atoms[name] ** (sign * int(power or 1))
        return out

    for unit, (_, exact) in EXACT.items():
        assert factor(unit) == exact, unit
    # the table covers every mass unit times every length unit (squared: inertia; once: moment)
    for mass in ("kg", "g", "t", "lb", "oz", "slug"):
        for length in ("m", "mm", "cm", "in", "ft"):
            assert EXACT[f"{mass}*{length}**2"][0] == "inertia"
            assert EXACT[f"{mass}*{length}"][0] == "moment"
    # SP 811 Appendix B's printed values (7 significant figures) for a few derived entries
    assert float(EXACT["slug"][1]) == pytest.approx(1.459390e1, rel=5e-7)
    assert float(EXACT["lb*in**2"][1]) == pytest.approx(2.926397e-4, rel=5e-7)
    assert float(EXACT["gal"][1]) == pytest.approx(3.785412e-3, rel=5e-7)
