"""Values a person mistypes are refused with the reason, never read as something else.

References: unit factors are the NIST SP 811 exact ones (1 lb = 0.45359237 kg,
1 in = 0.0254 m, 1 ft = 12 in); float limits are IEEE 754 binary64 (smallest
subnormal 2**-1074 = 5e-324 as printed, largest finite sys.float_info.max);
what Python's float() accepts beyond ASCII decimals is PEP 515 (underscores)
and the float() documentation (any Unicode decimal digit); the add-mass
answer is FAA-H-8083-1's new CG = (W·cg + w·s) / (W + w), worked in exact
fractions here; argparse's own negative-number test is its documented
"-2000 / -0.5" pattern (scientific notation is not in it).
"""

from __future__ import annotations

import json
import os
import unicodedata
from fractions import Fraction as F

import numpy as np
import pytest

from steelyard.cli.main import main
from steelyard.core.errors import SteelyardError, UnitError, said
from steelyard.core.physics.groups import MAX_GROUP_DEPTH, group_depth_problem, subtotals
from steelyard.core.units import parse_number, parse_quantity, to_si, unit_factor
from steelyard.io.ledger.file import open_ledger
from support.cli import run_process

LB, IN, FT = F("0.45359237"), F("0.0254"), 12 * F("0.0254")  # NIST SP 811, exact
ARABIC_12 = unicodedata.lookup("ARABIC-INDIC DIGIT ONE") + unicodedata.lookup("ARABIC-INDIC DIGIT TWO")
FULLWIDTH_12 = unicodedata.lookup("FULLWIDTH DIGIT ONE") + unicodedata.lookup("FULLWIDTH DIGIT TWO")


# ---------------------------------------------------------------- A: one number, one unit

@pytest.mark.parametrize("text,dim,words", [
    ("41,5 lb", "mass", "use a decimal point: 41.5 lb"),  # would be 415 lb read as pint reads it
    ("3 2 in", "length", "one number and one unit"),  # pint: 3 × 2 in = 6 in
    ("1 kg 2", "mass", "one number and one unit"),  # pint: 2 kg
    ("2 kg 3 lb", "mass", "one number and one unit"),  # sums are for lengths only
    ("3 ft -2 in", "length", "one number and one unit"),  # a sign inside a sum
    ("2 in 3 ft", "length", "smaller than the one before"),
    ("1,000 lb", "mass", "no thousands separator"),
    ("1_5 kg", "mass", ""),  # PEP 515 underscores are Python syntax, not a person's number
    (ARABIC_12 + " kg", "mass", "ASCII"),  # float() would read these as 12
    (FULLWIDTH_12 + " kg", "mass", "ASCII"),
    ("1e-400 kg", "mass", "too small"),  # below 2**-1074: IEEE 754 would round it to 0
    ("1e400 kg", "mass", "too large"),  # above sys.float_info.max
    ("12 kg" + ARABIC_12, "mass", "one number and one unit"),
])
def test_mistyped_quantities_are_refused_with_the_reason(text, dim, words):
    with pytest.raises(UnitError) as err:
        parse_quantity(text, dim)
    assert words in str(err.value), str(err.value)


def test_a_minus_on_a_sum_of_lengths_is_refused_and_the_one_term_form_suggested():
    # -3 ft 2 in could be -(36 + 2) in or (-36 + 2) in; the suggestion is the magnitude 38 in, signed
    with pytest.raises(UnitError) as err:
        parse_quantity("-3 ft 2 in", "length")
    assert "ambiguous" in str(err.value) and "'-38 in'" in str(err.value)
    with pytest.raises(UnitError, match="'-125 cm'"):  # 1 m 25 cm = 125 cm (SI prefixes)
        parse_quantity("-1 m 25 cm", "length")


def test_documented_sum_and_single_terms_still_read_exactly():
    # 3 ft 2 in = 38 in; one rounding of the exact product (NIST SP 811 factors)
    assert parse_quantity("3 ft 2 in", "length") == float(38 * IN)
    assert parse_quantity("+3 ft 2 in", "length") == float(38 * IN)
    assert parse_quantity("41.5 lb", "mass") == float(F("41.5") * LB)
    assert parse_quantity("-3.25e-2 ft", "length") == float(F("-3.25e-2") * FT)
    assert parse_quantity("12 %", "dimensionless") == 0.12  # percent = 1/100 (SI brochure)
    assert parse_quantity("2 kg * m ^ 2", "inertia") == 2.0


@pytest.mark.parametrize("text,words", [
    ("1_5", "ASCII"), (ARABIC_12, "ASCII"), (FULLWIDTH_12, "ASCII"), ("41,5", "use a decimal point: 41.5"),
    ("1e-400", "too small"), ("1e400", "too large"), ("nan", "finite"), ("inf", "finite"),
])
def test_bare_numbers_are_ascii_decimals(text, words):
    with pytest.raises(UnitError) as err:
        parse_number(text)
    assert words in str(err.value), str(err.value)


def test_what_python_alone_would_have_read():
    # why the strict reader exists: PEP 515 underscores, Unicode digits (float() docs), IEEE 754 rounding
    assert float("1_5") == 15.0 and float(ARABIC_12) == 12.0 and float(FULLWIDTH_12) == 12.0
    assert float("1e-400") == 0.0 and float("1e400") == float("inf")


def test_bare_numbers_that_are_fine():
    assert parse_number("-1e3") == -1000.0
    assert parse_number(" 0.5 ") == 0.5
    assert parse_number("5e-324") == 2.0 ** -1074  # IEEE 754 smallest subnormal: representable, kept


def test_a_unit_with_a_number_in_it_is_refused():
    with pytest.raises(UnitError, match="number in it"):
        unit_factor("kg 2", "mass")
    assert unit_factor("lb*in**2", "inertia") == float(LB * IN * IN)  # exponents are not numbers


def test_bare_file_number_that_underflows_in_si_is_refused():
    with pytest.raises(UnitError, match="too small"):
        to_si(5e-324, "mass", "lb")  # 2**-1074 × 0.45359237 rounds to 0 (IEEE 754)


LEDGER = """steelyard = 1
[units]
mass = "lb"
length = "in"
[[item]]
id = "box"
mass = {mass}
cg = [100, 0, 0]
"""


@pytest.mark.parametrize("mass,words", [('"41,5 lb"', "decimal point"), ('"1 kg 2"', "one number"),
                                        ('"3 2 lb"', "one number")])
def test_the_file_reader_names_item_and_field(tmp_path, mass, words):
    path = tmp_path / "l.toml"
    path.write_text(LEDGER.format(mass=mass))
    with pytest.raises(SteelyardError) as err:
        open_ledger(path)
    text = str(err.value)
    assert "item 'box'" in text and "mass" in text and words in text, text


@pytest.mark.parametrize("typed", ["41,5 lb", "3 2 in", "1 kg 2", "-3 ft 2 in"])
def test_the_editor_form_refuses_what_the_parser_refuses(typed):
    from steelyard.tui.state.form_values import quantity

    dim = "length" if "in" in typed else "mass"
    with pytest.raises(SteelyardError):
        quantity(typed, dim, "in" if dim == "length" else "lb", "f")


# ---------------------------------------------------------------- G: solve options

SOLVE = """steelyard = 1
[units]
mass = "lb"
length = "in"
[[item]]
id = "airframe"
mass = 3000
cg = [100, 0, 0]
"""


@pytest.fixture
def solve_file(tmp_path):
    path = tmp_path / "s.toml"
    path.write_text(SOLVE)
    return path


@pytest.mark.parametrize("argv", [["--mass", "-1e3"], ["--mass=-1e3"], ["--mass", "-1000"], ["--mass", "-1.0E+3"]])
def test_negative_numbers_in_any_spelling_are_values(solve_file, capsys, argv):
    assert main(["solve", "add", str(solve_file), *argv, "--station", "4e1", "--json"]) == 0
    rec = json.loads(capsys.readouterr().out)
    # FAA-H-8083-1: removing 1000 lb at 40 in from 3000 lb at 100 in -> 2000 lb at (300000 - 40000) / 2000 = 130 in
    assert rec["new_mass_kg"] == pytest.approx(float(2000 * LB), rel=1e-15)
    assert rec["new_cg_m"] == pytest.approx(float(130 * IN), rel=1e-14)


def test_negative_station_in_scientific_notation(solve_file, capsys):
    assert main(["solve", "add", str(solve_file), "--mass", "1e3", "--station", "-1e2", "--json"]) == 0
    rec = json.loads(capsys.readouterr().out)
    # (3000·100 + 1000·(-100)) / 4000 = 50 in
    assert rec["new_cg_m"] == pytest.approx(float(50 * IN), rel=1e-14)


@pytest.mark.parametrize("extra", [[], ["--json"]])
def test_an_answer_that_overflows_is_an_error_not_inf(solve_file, extra):
    r = run_process("solve", "add", solve_file, "--mass", "1e308", "--station", "1e308", *extra)
    assert r.returncode == 2, r.stdout
    assert r.stderr.startswith("steelyard: ") and r.stderr.count("\n") == 1, r.stderr
    assert "inf in" not in r.stdout and "Traceback" not in r.stderr


def test_removing_too_much_is_said_in_the_files_units_as_typed(solve_file):
    r = run_process("solve", "add", solve_file, "--mass", "-3500", "--station", "100")
    assert r.returncode == 2
    # docs/numbers.md: 5 significant figures at the loadout's 3,000 lb, one decimal for every mass
    assert "'-3500'" in r.stderr and "3,500.0 lb" in r.stderr and "3,000.0 lb" in r.stderr, r.stderr


@pytest.mark.parametrize("value,words", [("41,5 lb", "decimal point"), ("1_5", "ASCII"), ("3 2 lb", "one number")])
def test_solve_mass_is_parsed_strictly(solve_file, value, words):
    r = run_process("solve", "add", solve_file, "--mass", value, "--station", "100")
    assert r.returncode == 2 and "--mass" in r.stderr and words in r.stderr, r.stderr


# ---------------------------------------------------------------- H: messages and warnings

def test_said_shows_numpy_values_as_plain_numbers():
    # reference: Python's own shortest float repr (repr(float))
    assert said(np.float64(-102.05828325)) == repr(-102.05828325)
    assert said([np.float64(1.5), np.int64(3)]) == "[1.5, 3]"
    assert said(np.array([0.25, 2.0])) == "[0.25, 2.0]"
    assert said(np.bool_(True)) == "True"


def test_no_warning_text_from_denormal_masses(tmp_path):
    led = tmp_path / "d.toml"
    led.write_text('steelyard = 1\n[[item]]\nid = "a"\ngroup = "g/h"\nmass = 5e-324\ncg = [1, 2, 3]\n'
                   'tolerance = { mass = 1e-320, kind = "sigma" }\n'
                   '[[item]]\nid = "b"\ngroup = "g"\nmass = 1e-322\ncg = [4, 2, 3]\n'
                   'inertia = { xx = 5e-324, yy = 5e-324, zz = 5e-324 }\n')
    csv_path = tmp_path / "d.csv"
    csv_path.write_text("id,mass [kg],x [m],y [m],z [m],xx [kg*m**2],yy [kg*m**2],zz [kg*m**2]\n"
                        "a,5e-324,1,2,3,5e-324,5e-324,5e-324\n")
    env = {**os.environ, "PYTHONWARNINGS": "default"}  # show every warning there is
    for argv in (["export", led, "--json", "-"], ["export", led, "--csv", "-"],
                 ["import", csv_path, "-o", tmp_path / "new.toml"],
                 ["solve", "add", led, "--mass", "5e-324", "--station", "1"]):
        r = run_process(*argv, env=env)
        assert "Warning" not in r.stderr, (argv, r.stderr)


# ---------------------------------------------------------------- F: group depth

def test_group_depth_limit():
    assert group_depth_problem("/".join(["p"] * MAX_GROUP_DEPTH)) is None
    assert group_depth_problem("a//b/") is None  # empty parts are not levels (docs/format.md)
    problem = group_depth_problem("/".join(["p"] * 20_000))
    assert problem is not None and "20000" in problem and str(MAX_GROUP_DEPTH) in problem


def test_subtotals_of_the_deepest_allowed_path():
    parts = [f"l{k}" for k in range(MAX_GROUP_DEPTH)]
    groups = ["/".join(parts), "/".join(parts[:10]), "other/x", "", "b//c"]
    mass = np.array([3.0, 1.0, 2.0, 4.0, 0.5])
    cg = np.array([[1.0, 0, 0], [5.0, 0, 0], [2.0, 0, 0], [0.0, 0, 0], [7.0, 0, 0]])
    totals = subtotals(groups, mass, cg, np.zeros((5, 3, 3)))
    # reference order: parents before children, siblings by name = sorting by the list of parts
    expected = sorted({"/".join(parts[:k]) for k in range(1, MAX_GROUP_DEPTH + 1)}
                      | {"other", "other/x", "(ungrouped)", "b", "b/c"}, key=lambda p: p.split("/"))
    assert [t.path for t in totals] == expected
    by = {t.path: t for t in totals}
    for k in (1, 10, 11, MAX_GROUP_DEPTH):
        t = by["/".join(parts[:k])]
        # levels 1..10 hold both rows: 3 + 1, CG (3·1 + 1·5) / 4 = 2 (exact sums); deeper ones the 3-unit row
        assert (t.depth, t.count, t.mass, t.cg[0]) == ((k - 1, 2, 4.0, 2.0) if k <= 10 else (k - 1, 1, 3.0, 1.0))
    assert by["b/c"].mass == 0.5 and by["(ungrouped)"].mass == 4.0
