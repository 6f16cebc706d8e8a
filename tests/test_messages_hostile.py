"""Hostile input in the weighing, uncertainty, item-form and solver paths: refused
strictly, and worded in the user's own terms.

References:
- NIST SP 811 (exact): 1 lb = 0.45359237 kg, 1 in = 0.0254 m, standard gravity
  g_n = 9.80665 m/s², 1 lbf = 1 lb × g_n (so a force in lbf divided by g_n is
  the same number of lb).
- PEP 515 and the Python docs for float(): float("1_5") is 15 and float()
  takes any script's decimal digits, so float() is not a strict reader.
- IEEE 754 binary64: 5e-324 is the smallest subnormal (one unit in the last
  place); 1e-323 is two of them, so their ratio is exact.
- JCGM 100 (the GUM): first-order propagation, independent inputs add as
  root-sum-square; a uniform error of half-width a has sigma a/√3.
- FAA-H-8083-1: weight shift and ballast formulas (the questions with no answer
  are the ones worded here).
"""

from __future__ import annotations

import math
import unicodedata
import warnings
from fractions import Fraction as F

import numpy as np
import pytest

from steelyard.core.control.uncertainty import monte_carlo, propagate, worst_case
from steelyard.core.control.weighing import parse_weighing, reduce_weighing
from steelyard.core.document.model import FileUnits, Ledger
from steelyard.core.errors import SteelyardError
from steelyard.core.limits.solvers import add_mass, ballast_for_limit, ballast_to_enter, weight_shift
from steelyard.io.ledger.file import load_ledger
from steelyard.tui.state.form_values import item_from_fields, quantity
from support.cli import run_process
from support.paths import ROOT

WEIGHING = ROOT / "fixtures" / "weighing-example.toml"  # a ledger in lb and in
LB, IN, G_N = F("0.45359237"), F("0.0254"), F("9.80665")  # NIST SP 811, exact
US = FileUnits("lb", "in", "lb*in**2")
ARABIC_12 = unicodedata.lookup("ARABIC-INDIC DIGIT ONE") + unicodedata.lookup("ARABIC-INDIC DIGIT TWO")


# --------------------------------------------------------------------------- weighing


def _table(**nose):
    point = {"name": "nose", "at": [-30.0, 0.0, 0.0], "reading": 225.0, "tare": 2.5}
    point.update(nose)
    return {"point": [point]}


def _weigh_error(table) -> SteelyardError:
    with pytest.raises(SteelyardError) as err:
        parse_weighing(table, US).reduce()
    return err.value


@pytest.mark.parametrize("reading, quoted", [(-225, "-225"), (-225.5, "-225.5"), ("-225 lb", "'-225 lb'")])
def test_negative_reading_is_quoted_as_written_not_in_kg(reading, quoted):
    e = _weigh_error(_table(reading=reading))
    assert (e.subject, e.field) == ("weighing point 'nose'", "reading")
    assert str(e).endswith(f"got {quoted}")
    # 225 lb is 102.05828325 kg (NIST SP 811): the SI figure is not what the user wrote
    assert "102.058" not in str(e) and "np." not in str(e) and "kg" not in str(e)


def test_tare_above_reading_names_both_in_the_files_unit():
    e = _weigh_error(_table(tare=300))
    assert e.field == "tare"
    assert "300 lb" in str(e) and "225 lb" in str(e) and "kg" not in str(e)


def test_on_board_beyond_the_weighed_mass_is_said_in_the_files_unit():
    table = _table(tare=0)
    table["on_board"] = [{"name": "ballast", "mass": 2000, "at": [0, 0, 0]}]
    e = _weigh_error(table)
    assert e.field == "on_board"
    assert "-1775 lb" in str(e)  # 225 - 2000 = -1775 (arithmetic)


def test_negative_volume_times_negative_density_is_not_a_mass():
    table = _table()
    table["on_board"] = [{"name": "fuel", "volume": "-30 gal", "density": "-5.9 lb/gal", "at": [95, 0, 20]}]
    e = _weigh_error(table)
    assert (e.subject, e.field) == ("weighing on_board 'fuel'", "volume")
    assert "'-30 gal'" in str(e)


def test_api_values_from_numpy_are_plain_numbers():
    with pytest.raises(SteelyardError) as err:
        reduce_weighing(np.zeros((1, 3)), [np.float64(-3.5)], [0.0])
    assert "np." not in str(err.value) and "-3.5 kg" in str(err.value)
    with pytest.raises(SteelyardError) as err:
        reduce_weighing(np.zeros((1, 3)), [5.0], [0.0], on_board=[(np.float64(-1.25), (0, 0, 0))])
    assert "np." not in str(err.value) and "-1.25 kg" in str(err.value)


@pytest.mark.parametrize("text, words", [
    ("41,5 lbf", "decimal point"),  # pint alone reads this as 415 lbf
    ("3 2 lbf", "one number and one unit"),  # pint alone multiplies: 6 lbf
    ("650 lbf 2", "one number and one unit"),
    ("1_5 lbf", "one number and one unit"),
])
def test_force_readings_are_read_strictly(text, words):
    e = _weigh_error(_table(reading=text))
    assert e.field == "reading" and words in str(e)


def test_force_readings_divide_by_standard_gravity():
    # 650 lbf / g_n = 650 lb exactly; 2890 N / g_n in kg (NIST SP 811)
    res = parse_weighing(_table(reading="650 lbf", tare="2890 N"), US)
    assert res.readings[0] == pytest.approx(float(650 * LB), rel=1e-15)
    assert res.tares[0] == pytest.approx(float(F(2890) / G_N), rel=1e-15)


def test_cli_weigh_message_quotes_the_file(tmp_path):
    text = WEIGHING.read_text().replace("reading = 225.0", "reading = -225.0")
    assert "reading = -225.0" in text
    path = tmp_path / "w.toml"
    path.write_text(text)
    out = run_process("weigh", path)
    assert out.returncode == 2
    assert "weighing point 'nose': reading: must be >= 0, got -225.0" in out.stderr
    assert "np.float64" not in out.stderr and "102.058" not in out.stderr


# --------------------------------------------------------------------------- item form


@pytest.mark.parametrize("text", ["1_5", ARABIC_12, "\uff11\uff12", "12 \u0664", "nan", "inf"])
def test_form_refuses_what_float_would_take(text):
    if text in ("1_5", ARABIC_12):  # the hazard itself (PEP 515; float() docs)
        assert float(text) in (15.0, 12.0)
    with pytest.raises(SteelyardError) as err:
        quantity(text, "mass", "lb", "mass")
    assert err.value.field == "mass"
    assert "ASCII" in str(err.value) or "finite" in str(err.value)


def test_form_decimal_comma_says_use_a_decimal_point():
    with pytest.raises(SteelyardError, match="use a decimal point") as err:
        quantity("41,5", "mass", "lb", "mass")
    assert err.value.field == "mass"


def test_form_bare_number_is_in_the_files_unit():
    assert quantity("41.5", "mass", "lb", "mass") == (pytest.approx(float(F("41.5") * LB), rel=1e-15), None)


@pytest.mark.parametrize("key, text", [("mass", "1_5"), ("x", ARABIC_12), ("quantity", ARABIC_12),
                                       pytest.param("quantity", "9" * 5000, id="quantity-5000-digits"),
                                       ("rotate", "z 1_5")])
def test_item_form_refuses_non_ascii_numbers_in_every_field(key, text):
    fields = {"id": "box", "mass": "10", "quantity": "1", "x": "1", "y": "0", "z": "0", key: text}
    with pytest.raises(SteelyardError) as err:
        item_from_fields(fields, None, Ledger(units=US))
    assert err.value.field == key


# --------------------------------------------------------------------------- uncertainty

DENORMAL = """steelyard = 1
[units]
mass = "kg"
length = "m"

[[item]]
id = "speck"
mass = 5e-324
cg = [1.0, 0.0, 0.0]
tolerance = { mass = 0.1, cg = 0.01, kind = "sigma" }

[[item]]
id = "mote"
mass = 1e-323
cg = [3.0, 0.5, 0.0]
tolerance = { mass = 0.1, cg = 0.01, kind = "bound" }

[[envelope]]
name = "normal"
axis = "x"
points = [[0, 1e-300], [5, 1e-300], [5, 100], [0, 100]]
"""


@pytest.mark.parametrize("command", ["rollup", "report"])
def test_denormal_masses_give_no_runtime_warning(tmp_path, command):
    path = tmp_path / "speck.toml"
    path.write_text(DENORMAL)
    args = [command, path] + (["-o", tmp_path / "r.md"] if command == "report" else [])
    out = run_process(*args)
    assert out.returncode == 0, out.stderr
    assert "RuntimeWarning" not in out.stderr and "Warning" not in out.stderr
    if command == "rollup":
        assert "Uncertainty" in out.stdout


def test_denormal_spread_is_finite_or_not_available():
    m, cg = [5e-324, 1e-323], [[1.0, 0.0, 0.0], [3.0, 0.5, 0.0]]
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        s = propagate(m, cg, [0.1, 0.1 / math.sqrt(3)], [[0.01] * 3, [0.01 / math.sqrt(3)] * 3])
        w = worst_case(m, cg, [0.3, 0.1], [[0.03] * 3, [0.01] * 3])
        monte_carlo(m, cg, [0.1, 0.1 / math.sqrt(3)], [[0.01] * 3, [0.01 / math.sqrt(3)] * 3], samples=200)
    # GUM: sigma of a sum of independent masses is the root-sum-square
    assert s.mass == pytest.approx(math.sqrt(0.1 ** 2 + 0.1 ** 2 / 3), rel=1e-15)
    # the x and y CG move by ~1e323 m per kg of error: beyond a float, so not available
    assert math.isnan(s.cg[0]) and math.isnan(s.cg[1]) and math.isnan(w.cg[0])
    assert np.isnan(s.covariance[1, 1]) and not np.isinf(s.covariance).any()
    # z: every CG at 0, so only the CG tolerances count, weighted m_i/M = 1/3 and 2/3 (exact subnormals)
    z = math.sqrt((F(1, 3) * 0.01) ** 2 + (F(2, 3) * 0.01 / math.sqrt(3)) ** 2)
    assert s.cg[2] == pytest.approx(z, rel=1e-14)
    assert w.mass == pytest.approx(0.4, rel=1e-15)  # 3 × 0.1 (sigma-kind as 3σ, common practice) + 0.1


@pytest.mark.parametrize("text", ["1_5 %", f"{ARABIC_12} %", "5,5 %"])
def test_percentage_tolerance_is_read_strictly(tmp_path, text):
    path = tmp_path / "t.toml"
    path.write_text(f'steelyard = 1\n[[item]]\nid = "a"\nmass = 10.0\ncg = [0, 0, 0]\n'
                    f'tolerance = {{ mass = "{text}", kind = "sigma" }}\n', encoding="utf-8")
    with pytest.raises(SteelyardError) as err:
        load_ledger(path)
    assert err.value.field == "tolerance.mass"
    assert "ASCII" in str(err.value) or "decimal point" in str(err.value)


# --------------------------------------------------------------------------- solvers


def test_solver_messages_use_the_ledgers_units():
    w, x = float(1500 * LB), float(50 * IN)
    with pytest.raises(SteelyardError) as err:
        weight_shift(w, x, float(48 * IN), float(100 * IN), float(100 * IN), units=US)
    assert "station 100 in" in str(err.value) and " m " not in str(err.value)
    with pytest.raises(SteelyardError) as err:
        add_mass(w, x, float(-2000 * LB), float(80 * IN), units=US)
    assert "removing 2000 lb from 1500 lb" in str(err.value)
    with pytest.raises(SteelyardError) as err:
        ballast_for_limit(w, x, float(44 * IN), float(44 * IN), units=US)
    assert "limit station 44 in" in str(err.value)
    envelope = [[float(44 * IN), float(1200 * LB)], [float(58 * IN), float(1200 * LB)],
                [float(58 * IN), float(1800 * LB)], [float(44 * IN), float(1800 * LB)]]
    with pytest.raises(SteelyardError) as err:
        ballast_to_enter(envelope, float(2000 * LB), x, float(80 * IN), units=US)
    assert "2000 lb" in str(err.value) and "1800 lb" in str(err.value) and "kg" not in str(err.value)


def test_solver_messages_without_units_stay_in_si():
    with pytest.raises(SteelyardError) as err:
        weight_shift(680.0, 1.27, 1.2, 2.54, 2.54)
    assert "station 2.54 m" in str(err.value)


def test_cli_solve_message_in_the_files_units():
    out = run_process("solve", "shift", "--from", "100", "--to", "100", "--target-cg", "50", WEIGHING)
    assert out.returncode == 2
    assert "station 100 in" in out.stderr and "2.54" not in out.stderr
    out = run_process("solve", "ballast", "--limit", "44", "--station", "44", WEIGHING)
    assert out.returncode == 2
    assert "limit station 44 in" in out.stderr and "1.1176" not in out.stderr
