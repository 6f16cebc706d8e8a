"""The one number rule (docs/numbers.md): every example on that page, the hand-picked cases of
the rule, and the display-unit factors against NIST SP 811."""

from __future__ import annotations

import re
from fractions import Fraction
from pathlib import Path

import pytest

from steelyard.core.display import CHOICES, DisplayUnits, UnitChoice, display_unit
from steelyard.core.document.model import FileUnits
from steelyard.core.errors import UnitError
from steelyard.core.numbers import column, number
from support.sigfig import sig_text
from support.units import IN, LB

DOC = Path(__file__).resolve().parents[1] / "docs" / "numbers.md"
G0 = Fraction("9.80665")  # standard gravity, m/s² (exact by definition; NIST SP 811)
FT = 12 * IN
#: exact SI factor of each display unit (NIST SP 811, Appendix B; slug = lbf·s²/ft)
EXACT = {"kg": Fraction(1), "g": Fraction(1, 1000), "lb": LB, "oz": LB / 16,
         "m": Fraction(1), "mm": Fraction(1, 1000), "in": IN, "ft": FT,
         "kg*m**2": Fraction(1), "g*mm**2": Fraction(1, 10**9), "lb*in**2": LB * IN**2,
         "slug*ft**2": LB * G0 / FT * FT**2}


def _rows(heading_cols: str):
    """Rows of the page's tables whose header is `heading_cols` (the examples are the page's own)."""
    lines = DOC.read_text(encoding="utf-8").splitlines()
    out, inside = [], False
    for line in lines:
        if line.startswith("| " + heading_cols):
            inside = True
            continue
        if inside and line.startswith("|---"):
            continue
        if inside and line.startswith("|"):
            out.append([c.strip() for c in line.strip("|").split("|")])
        else:
            inside = False
    return out


LONE = _rows("quantity | unit | value | shown")
COLUMNS = _rows("quantity | unit | values | shown")


def test_the_page_has_its_examples():
    # the hand-picked cases from the issue must be on the page (so they are tested below)
    shown = {r[3] for r in LONE}
    assert {"`35 g`", "`0.035 kg`", "`1,158.1 lb`", "`0 m`", "`0`"} <= shown
    assert len(LONE) >= 15 and len(COLUMNS) >= 3


@pytest.mark.parametrize("kind, unit, value, shown", LONE, ids=[" ".join(r[:3]) for r in LONE])
def test_every_lone_example_on_the_page(kind, unit, value, shown):
    expected = shown.strip("`")
    if unit == "-":
        assert number(float(value), kind) == expected
        return
    if unit == "auto":
        du = DisplayUnits.choose(FileUnits(), UnitChoice(mass="auto"))
        si = float(Fraction(value))  # the value of an auto row is in kg
    else:
        du = DisplayUnits.choose(FileUnits(), UnitChoice(**{kind: unit}))
        si = float(Fraction(value) * EXACT[unit])  # exact factor, one rounding
    assert du.text(si, kind) == expected


@pytest.mark.parametrize("kind, unit, values, shown", COLUMNS, ids=[r[0] for r in COLUMNS])
def test_every_column_example_on_the_page(kind, unit, values, shown):
    expected = [s.strip().strip("`") for s in shown.split(",  ")] if ",  " in shown else \
        [s.strip("`") for s in re.findall(r"`[^`]*`", shown)]
    got = column([float(v) for v in values.split(",")], kind)
    assert got == expected
    decimals = {len(t.partition(".")[2]) for t in got}
    assert len(decimals) == 1  # one count of decimals per column (docs/numbers.md)


@pytest.mark.parametrize("x", [0.035, 1158.1455, 6280.0, 14123235.6688, 0.0123456789, 99999.5, 1.00004,
                               3.14159265, 271828.18, 0.5, 7.0])
def test_significant_figures_agree_with_decimal_rounding(x):
    # Python's decimal module rounds to 5 significant figures independently (tests/support/sigfig.py);
    # integer digits beyond the fifth are kept by both
    assert number(x, "mass") == sig_text(x, 5)


def test_no_negative_zero_anywhere():
    for kind in ("mass", "length", "inertia", "fraction", "percent", "percent_mac"):
        assert not number(-1e-13, kind).startswith("-0")
        assert all(not t.startswith("-0") or t.strip("-0.,") for t in column([-1e-13, 1.0], kind))


def test_a_column_never_mixes_decimals():
    # the case: 1,050.00 beside 550.000 in one column
    got = column([1050.0, 550.0, 12.345], "length")
    assert len({len(t.partition(".")[2]) for t in got}) == 1


@pytest.mark.parametrize("dimension", sorted(CHOICES))
def test_display_unit_factors_are_exact(dimension):
    # NIST SP 811 (tests/support/units.py): each float factor is the exact one rounded once
    for unit in CHOICES[dimension]:
        if unit == "auto":
            continue
        du = DisplayUnits.choose(FileUnits(), UnitChoice(**{dimension: unit}))
        assert du.factor(dimension) == float(EXACT[unit]), unit


def test_display_unit_spellings_and_refusals():
    assert display_unit("lb·in²", "inertia") == "lb*in**2"
    assert display_unit(" g ", "mass") == "g"
    with pytest.raises(UnitError, match="unknown mass unit"):
        display_unit("stone", "mass")
    with pytest.raises(UnitError):
        display_unit("mm", "mass")


def test_auto_mass_in_us_units_goes_to_ounces():
    du = DisplayUnits.choose(FileUnits(), UnitChoice(system="us", mass="auto"))
    # 0.5 lb = 8 oz exactly (NIST SP 811: 1 oz = 1/16 lb)
    assert du.mass_text(float(LB / 2)) == "8 oz"
    assert du.mass_text(float(3 * LB)) == "3 lb"
