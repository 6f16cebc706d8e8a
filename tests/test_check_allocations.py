"""`steelyard check` gates [[allocation]] budgets, and its text report keeps one line per cell.

Hand calculation (exact fractions): predicted mass = basic mass × (1 +
growth allowance), item by item, summed over the group and its subgroups;
the allocation is broken when the predicted mass is above the not-to-exceed
(ANSI/AIAA S-120A-2015: growth allowance added to basic mass to give the
predicted mass that is compared with the not-to-exceed). Unit factors:
NIST SP 811 (1 lb = 0.45359237 kg exactly).
"""

from __future__ import annotations

import json
from fractions import Fraction as F

import pytest

from support.cli import run_main
from support.ledgers import write_ledger
from support.paths import ROOT
from support.units import LB

OVER = ROOT / "fixtures" / "trainer-overweight.toml"

# Avionics: basic 1.2 + 2.5 + 0.8 = 4.5 kg (under 4.747); predicted
# 1.2 × 1.15 + 2.5 × 1.10 + 0.8 × 1.25 = 1.38 + 2.75 + 1.00 = 5.13 kg: 0.383 kg (383 g) over.
# "avionics-bay" is not a subgroup of "avionics" (docs/control.md: matching is by path).
AVIONICS = """steelyard = 1

[[item]]
id = "radio"
group = "avionics/comms"
mass = 1.2
cg = [1.0, 0.0, 0.5]
maturity = "layout"            # 15 % by the default table

[[item]]
id = "computer"
group = "avionics"
mass = 2.5
cg = [1.2, 0.1, 0.4]
growth = 0.10

[[item]]
id = "imu"
group = "avionics/sensors"
mass = 0.8
cg = [1.1, 0.0, 0.3]
maturity = "estimated"         # 25 % by the default table

[[item]]
id = "bay-door"
group = "avionics-bay"
mass = 10.0
cg = [1.0, 0.0, 0.0]
maturity = "estimated"

[[allocation]]
group = "avionics"
mass = 4.747
"""

GROWTH = {"layout": F(15, 100), "estimated": F(25, 100)}  # docs/control.md default table (from memory there)


def _check(capsys, path, *more):
    return run_main(capsys, "check", path, *more)


def test_group_over_its_allocation_breaks_the_check(tmp_path, capsys):
    path = write_ledger(tmp_path, AVIONICS)
    code, out, err = _check(capsys, path, "--json")
    assert code == 1, err  # exit 1: a limit is broken (DESIGN.md exit codes)
    rec = json.loads(out)
    assert rec["ok"] is False
    (a,) = rec["allocations"]
    basic = F("1.2") + F("2.5") + F("0.8")
    predicted = F("1.2") * (1 + GROWTH["layout"]) + F("2.5") * (1 + F(1, 10)) + F("0.8") * (1 + GROWTH["estimated"])
    assert predicted == F("5.13") and basic == F("4.5")  # the hand sum above
    assert a["group"] == "avionics" and a["ok"] is False
    assert a["allocation_kg"] == pytest.approx(float(F("4.747")), rel=1e-15)
    assert a["predicted_kg"] == pytest.approx(float(predicted), rel=1e-14)
    assert a["basic_kg"] == pytest.approx(float(basic), rel=1e-14)
    assert a["margin_kg"] == pytest.approx(float(F("4.747") - predicted), rel=1e-12)  # -0.383 kg
    assert a["margin_kg"] == pytest.approx(-0.383, rel=1e-12)
    # one check per allocation, counted with the others; the existing keys stay
    assert rec["checks"] == 1 and rec["broken"] == 1
    assert {"file", "states", "sequences", "mac", "caution"} <= set(rec)


def test_basic_under_but_predicted_over_is_broken(tmp_path, capsys):
    # basic 4.5 kg < 4.747 kg < predicted 5.13 kg: the budget is judged on predicted mass (S-120A practice)
    path = write_ledger(tmp_path, AVIONICS)
    code, out, _ = _check(capsys, path)
    assert code == 1
    assert "LIMITS BROKEN: 1 of 1 checks (allocation avionics)" in " ".join(out.split())
    assert "All limits met" not in out
    assert "BROKEN" in out and "Mass allocations" in out


def test_budget_with_room_passes_and_on_the_bound_is_within(tmp_path, capsys):
    # 2 kg at 25 % growth: predicted 2.5 kg exactly (binary-exact numbers); a budget of 2.5 kg is met
    text = """steelyard = 1
[[item]]
id = "camera"
group = "payload"
mass = 2.0
cg = [0.5, 0.0, 0.0]
growth = 0.25
[[allocation]]
group = "payload"
mass = 2.5
"""
    code, out, _ = _check(capsys, write_ledger(tmp_path, text), "--json")
    assert code == 0
    (a,) = json.loads(out)["allocations"]
    assert a["predicted_kg"] == 2.5 and a["margin_kg"] == 0.0 and a["ok"] is True  # 2 × (1 + 1/4), exact


def test_no_loadouts_is_not_counted_as_one(tmp_path, capsys):
    code, out, _ = _check(capsys, write_ledger(tmp_path, AVIONICS))
    head = " ".join(out.split()).split("Loadouts (and")[0]  # the heading, however the terminal wrapped it
    assert "1 loadout" not in head and "no loadouts" in head


def test_whole_vehicle_allocation_is_judged_at_the_heaviest_loadout(tmp_path, capsys):
    # whole vehicle: frame 50 kg at 10 % -> 55 kg; fuel 20 kg, no growth. Budget 70 kg.
    # "ferry" (full fuel): 55 + 20 = 75 kg, 5 kg over; "local" (1/4 fuel): 55 + 5 = 60 kg.
    text = """steelyard = 1
[[item]]
id = "frame"
group = "structure"
mass = 50.0
cg = [2.0, 0.0, 0.0]
growth = 0.10
[[item]]
id = "fuel"
group = "fuel"
mass = 20.0
cg = [2.2, 0.0, 0.0]
variable = true
[[loadout]]
name = "local"
[loadout.set]
fuel = 0.25
[[loadout]]
name = "ferry"
[loadout.set]
fuel = 1.0
[[allocation]]
group = ""
mass = 70.0
"""
    path = write_ledger(tmp_path, text)
    code, out, _ = _check(capsys, path, "--json")
    assert code == 1
    (a,) = json.loads(out)["allocations"]
    assert a["group"] == "" and a["loadout"] == "ferry"
    assert a["predicted_kg"] == pytest.approx(float(50 * F(11, 10) + 20), rel=1e-14)
    assert a["margin_kg"] == pytest.approx(float(70 - (50 * F(11, 10) + 20)), rel=1e-12)
    # checked on one loadout only, the budget holds: 55 + 5 = 60 kg
    code, out, _ = _check(capsys, path, "--json", "--loadout", "local")
    assert code == 0
    (a,) = json.loads(out)["allocations"]
    assert a["loadout"] == "local" and a["margin_kg"] == pytest.approx(float(70 - (50 * F(11, 10) + 5)), rel=1e-12)


def test_allocation_in_pounds(tmp_path, capsys):
    # file in lb: budget "3 kg" against 6 lb basic at 15 % (layout): predicted 6.9 lb = 6.9 × 0.45359237 kg
    text = """steelyard = 1
[units]
mass = "lb"
[[item]]
id = "pump"
group = "hydraulics"
mass = 6.0
cg = [1.0, 0.0, 0.0]
maturity = "layout"
[[allocation]]
group = "hydraulics"
mass = "3 kg"
"""
    code, out, _ = _check(capsys, write_ledger(tmp_path, text), "--json")
    (a,) = json.loads(out)["allocations"]
    predicted = 6 * (1 + GROWTH["layout"]) * LB
    assert a["predicted_kg"] == pytest.approx(float(predicted), rel=1e-14)
    assert a["ok"] is (predicted <= 3) and code == (0 if predicted <= 3 else 1)  # 3.1298 kg > 3 kg: broken
    assert code == 1


def test_bad_allocation_is_one_line_exit_2(tmp_path, capsys):
    code, out, err = _check(capsys, write_ledger(tmp_path, AVIONICS.replace("mass = 4.747", 'mass = "4 m"')))
    assert code == 2 and out == ""
    lines = err.strip().splitlines()
    assert len(lines) == 1 and "allocation 'avionics'" in lines[0] and "mass" in lines[0]


# --------------------------------------------------------------------------- one line per cell


def test_text_report_has_no_line_break_inside_a_cell(capsys):
    # U+240A is the Unicode control picture for LF: the cleaner's rendering of a newline in a cell
    code, out, _ = _check(capsys, OVER)
    assert code == 1
    assert "\u240a" not in out
    lines = out.splitlines()
    broken = [ln for ln in lines if "broken in" in ln]
    assert broken, out
    # the "broken in steps" note starts its own row: nothing in the sequence and limit columns
    assert all(ln.split("broken in")[0].strip() in ("", "-1.10 %MAC") for ln in broken), broken


def test_table_cells_hold_no_newline():
    from rich.table import Table

    from steelyard.cli.render import check as render
    from steelyard.core.display import DisplayUnits
    from steelyard.core.limits.checks import check_ledger
    from steelyard.io.ledger.file import open_ledger

    loaded = open_ledger(str(OVER))
    report = check_ledger(loaded.ledger)
    nf = render._Fmt(DisplayUnits.choose(loaded.ledger.units, None))
    tables = [render._envelope_table(report, loaded.ledger.frame, nf), render._sequence_table(
        report, loaded.ledger.frame, nf), *render._limit_tables(report, nf)]
    cells = [str(c) for t in tables if isinstance(t, Table) for col in t.columns for c in col._cells]
    assert cells and not [c for c in cells if "\n" in c]
