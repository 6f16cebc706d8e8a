"""`steelyard check` and `steelyard solve` through the real command line.

Exit codes (DESIGN.md): 0 all limits met, 1 a limit broken, 2 bad input with
one line naming the file, the envelope / sequence / loadout and the field.
Handbook checks: CG = Σ moment / Σ weight, %MAC = (CG − LEMAC) / MAC × 100,
weight shift, weight addition and ballast by the FAA-H-8083-1 / -25 formulas
and the worked examples listed in REFERENCES.md (numbers re-derived there).
"""

from __future__ import annotations

import hashlib
import json
import tomllib
from fractions import Fraction as F
from pathlib import Path

import pytest

from steelyard.core.caution import CAUTION
from support.cli import process_one_line_error, run_process
from support.paths import ROOT, TRAINER
from support.units import IN, LB

OVER = ROOT / "fixtures" / "trainer-overweight.toml"


# --------------------------------------------------------------------------- exit codes


def test_trainer_passes_every_loadout_and_sequence():
    before = hashlib.sha256(TRAINER.read_bytes()).hexdigest()
    out = run_process("check", TRAINER, "--all")
    assert out.returncode == 0, out.stdout + out.stderr
    assert "All limits met" in out.stdout and "%MAC" in out.stdout and "trip-to-landing" in out.stdout
    # the caution (DESIGN.md safety wording) comes under the tables, as the last thing printed
    flat = " ".join(out.stdout.split())
    assert flat.endswith(" ".join(CAUTION.split()))
    assert max(len(line) for line in out.stdout.splitlines()) <= 80  # no terminal: 80 columns
    assert hashlib.sha256(TRAINER.read_bytes()).hexdigest() == before  # checking never writes


def test_overweight_file_fails_with_exit_1_and_names_what_broke():
    out = run_process("check", OVER)
    assert out.returncode == 1, out.stderr
    assert "LIMITS BROKEN" in out.stdout
    for words in ("ferry: max-takeoff-mass", "heavy-cabin (zero fuel): max-zero-fuel-mass", "nose-heavy: normal",
                  "forward-tank-first: normal"):
        assert words in " ".join(out.stdout.split()), words
    rec = json.loads(run_process("check", OVER, "--json").stdout)
    broken = {(s["name"], f["name"]) for s in rec["states"] + rec["sequences"] for f in s["findings"]
              if f["applies"] and not f["ok"]}
    assert broken == {("ferry", "normal"), ("ferry", "max-takeoff-mass"),
                      ("heavy-cabin (zero fuel)", "max-zero-fuel-mass"), ("nose-heavy", "normal"),
                      ("forward-tank-first", "normal")}
    assert rec["ok"] is False and rec["broken"] == 5 and rec["caution"] == CAUTION


def test_one_loadout_at_a_time_as_ci_would():
    assert run_process("check", OVER, "--loadout", "within-limits").returncode == 0
    # aft-loaded is inside as loaded, but the sequence that starts from it leaves the envelope
    out = run_process("check", OVER, "--loadout", "aft-loaded", "--json")
    assert out.returncode == 1
    rec = json.loads(out.stdout)
    assert [s["name"] for s in rec["states"]] == ["aft-loaded", "aft-loaded (zero fuel)"]
    assert all(s["ok"] for s in rec["states"]) and rec["sequences"][0]["ok"] is False
    f = rec["sequences"][0]["findings"][0]
    assert (f["first_broken_step"], f["last_broken_step"], f["step"]) == (2, 3, 2)
    process_one_line_error(run_process("check", OVER, "--loadout", "nope"), str(OVER), "--loadout", "nope")
    assert run_process("check", OVER, "--loadout", "ferry", "--all").returncode == 2


def test_json_record_is_si_and_matches_the_exact_roll_up():
    rec = json.loads(run_process("check", TRAINER, "--json").stdout)
    data = tomllib.loads(TRAINER.read_text())
    assert rec["mac"] == {"lemac_m": pytest.approx(float(114 * IN)), "length_m": pytest.approx(float(60 * IN))}
    s = next(x for x in rec["states"] if x["name"] == "solo-training")
    # solo-training: pilot 82 kg, both tanks half (file text); the rest of the items fixed
    w = mom = F(0)
    for it in data["item"]:
        m = it["mass"]
        m = F(m.split()[0]) / LB if isinstance(m, str) else F(m)  # only "1.2 kg" is written with a unit
        m *= it.get("quantity", 1)
        if it.get("variable"):
            m = {"pilot": F(82) / LB, "fuel-l": m / 2, "fuel-r": m / 2}.get(it["id"], F(0))
        w, mom = w + m, mom + m * F(it["cg"][0])
    assert s["mass_kg"] == pytest.approx(float(w * LB), rel=1e-13)
    assert s["cg_m"][0] == pytest.approx(float(mom / w * IN), rel=1e-13)
    assert s["cg_percent_mac"] == pytest.approx(float((mom / w - 114) / 60 * 100), rel=1e-12)
    env = next(f for f in s["findings"] if f["name"] == "normal")
    assert env["unit"] == "m" and env["margin_hi"] == pytest.approx(float((132 - mom / w) * IN), rel=1e-12)
    assert env["margin_hi_percent_mac"] == pytest.approx(float((132 - mom / w) / 60 * 100), rel=1e-11)


# --------------------------------------------------------------------------- bad input: exit 2, one line


def broken(tmp_path, old: str, new: str) -> Path:
    text = OVER.read_text()
    assert old in text
    p = tmp_path / "bad.toml"
    p.write_text(text.replace(old, new, 1))
    return p


@pytest.mark.parametrize("old,new,parts", [
    ('name = "normal"\naxis = "x"', 'name = "normal"\naxis = "q"', ["envelope 'normal'", "axis"]),
    ("points = [[124.0, 1150.0], [124.0, 1450.0], [126.5, 1760.0], [132.0, 1760.0], [132.0, 1150.0]]",
     "points = [[124.0, 1150.0], [132.0, 1760.0], [124.0, 1760.0], [132.0, 1150.0]]",
     ["envelope 'normal'", "points", "crosses"]),
    ('burn = { fuel-fwd = "all" }', 'burn = { fuel-front = "all" }',
     ["sequence 'forward-tank-first'", "step 2 burn.fuel-front", "unknown item"]),
    ('burn = { fuel-aft = "20 gal" }', 'burn = { fuel-aft = "25 gal" }',
     ["sequence 'forward-tank-first'", "step 3 burn.fuel-aft", "more than"]),
    ('name = "aft-loaded"\nbase = "within-limits"', 'name = "aft-loaded"\nbase = "loop"\n[[loadout]]\nname = "loop"\n'
     'base = "aft-loaded"\n[[loadout]]\nname = "spare"', ["loadout 'aft-loaded'", "base", "loop"]),
    ('off = ["cargo-pod"]', 'off = ["airframe"]', ["loadout 'heavy-cabin'", "off", "not removable"]),
    ("lemac = 114.0", 'lemac = "114 parsnips"', ["mac", "lemac"]),
])
def test_bad_input_exit_2_one_line(tmp_path, old, new, parts):
    p = broken(tmp_path, old, new)
    line = process_one_line_error(run_process("check", p), str(p), *parts)
    assert run_process("check", p, "--json").stdout == ""  # nothing half-printed on stdout
    assert len(line) < 300


# --------------------------------------------------------------------------- FAA handbook, through the CLI

ONE_ITEM = '''steelyard = 1
[units]
mass = "lb"
length = "in"
[[item]]
id = "aircraft"
mass = {w}
cg = [{x}, 0.0, 0.0]
'''


def ledger_file(tmp_path, w, x, extra="") -> Path:
    p = tmp_path / "w.toml"
    p.write_text(ONE_ITEM.format(w=w, x=x) + extra)
    return p


def solve(*args):
    out = run_process("solve", *args, "--json")
    assert out.returncode == 0, out.stderr
    return json.loads(out.stdout)


def test_cg_by_moments_amt_weighing_readings(tmp_path):
    # FAA-H-8083-30 ch. 4 weighing example inputs: net readings left 650−5, right 640−5 at +70 in,
    # nose 225−2.5 at −30 in; CG = Σ moment / Σ weight (derived with fractions)
    p = tmp_path / "scales.toml"
    p.write_text('''steelyard = 1
[units]
mass = "lb"
length = "in"
[mac]
lemac = 40.0
length = 58.0
[[item]]
id = "left"
mass = 645.0
cg = [70.0, -45.0, 0.0]
[[item]]
id = "right"
mass = 635.0
cg = [70.0, 45.0, 0.0]
[[item]]
id = "nose"
mass = 222.5
cg = [-30.0, 0.0, 0.0]
''')
    w = F(645) + F(635) + F("222.5")
    x = (F(645) * 70 + F(635) * 70 + F("222.5") * -30) / w
    rec = json.loads(run_process("check", p, "--json").stdout)
    s = rec["states"][0]
    assert s["mass_kg"] == pytest.approx(float(w * LB), rel=1e-14)
    assert s["cg_m"][0] == pytest.approx(float(x * IN), rel=1e-13)
    # FAA-H-8083-1 %MAC with an invented LEMAC 40 in and MAC 58 in
    assert s["cg_percent_mac"] == pytest.approx(float((x - 40) / 58 * 100), rel=1e-12)
    assert run_process("check", p).returncode == 0  # no limits at all: nothing broken


def test_weight_shift_handbook_example(tmp_path):
    # PHAK (FAA-H-8083-25) weight shift: 7,800 lb at 81.5 in, aft limit 80.5 in, cargo moved from
    # station 150 to 30: weight moved / total = ΔCG / distance moved -> 7800 × 1 / 120 = 65 lb
    p = ledger_file(tmp_path, 7800.0, 81.5)
    rec = solve("shift", p, "--from", 150, "--to", 30, "--target-cg", 80.5)
    assert rec["moved_kg"] == pytest.approx(float(F(7800) * 1 / 120 * LB), rel=1e-12)
    assert round(rec["moved_kg"] / float(LB), 2) == 65.0
    # the same through an envelope whose aft limit is 80.5 in: the CG goes onto that limit
    env = '\n[[envelope]]\nname = "n"\naxis = "x"\npoints = [[70.0, 5000.0], [70.0, 9000.0], [80.5, 9000.0], [80.5, 5000.0]]\n'
    p = ledger_file(tmp_path, 7800.0, 81.5, env)
    rec = solve("shift", p, "--from", "150 in", "--to", "30 in", "--envelope", "n")
    assert rec["moved_kg"] == pytest.approx(float(65 * LB), rel=1e-12)
    out = run_process("solve", "shift", p, "--from", 150, "--to", 30, "--envelope", "n")
    # docs/numbers.md: 5 significant figures at the vehicle's 7,800 lb, one decimal for every mass
    assert "65.0 lb" in out.stdout and CAUTION in out.stdout


def test_weight_addition_handbook_example(tmp_path):
    # FAA-H-8083-1 weight added: 6,860 lb at 80.0 in plus 140 lb at station 150 gives 81.4 in
    # (weight added / new total = ΔCG / (station − old CG): 140 × 70 / 7000 = 1.4)
    p = ledger_file(tmp_path, 6860.0, 80.0)
    rec = solve("add", p, "--mass", 140, "--station", 150)
    assert rec["new_mass_kg"] == pytest.approx(float(7000 * LB), rel=1e-14)
    assert rec["new_cg_m"] == pytest.approx(float(F("81.4") * IN), rel=1e-13)
    rec = solve("add", p, "--mass", "-140 lb", "--station", "150 in")
    assert rec["new_cg_m"] == pytest.approx(float((F(6860 * 80) - 140 * 150) / 6720 * IN), rel=1e-13)


def test_ballast_handbook_example(tmp_path):
    # FAA-H-8083-1 ballast: 4,954 lb at +30.5 in, forward limit +32.0 in, ballast at +162 in:
    # W × (distance out of limits) / (distance from ballast to limit) = 4954 × 1.5 / 130 = 57.16 lb
    expect = F(4954) * F("1.5") / 130
    p = ledger_file(tmp_path, 4954.0, 30.5)
    rec = solve("ballast", p, "--station", 162, "--limit", 32.0)
    assert rec["answers"][0]["ballast_kg"] == pytest.approx(float(expect * LB), rel=1e-12)
    assert round(rec["answers"][0]["ballast_kg"] / float(LB), 2) == 57.16
    assert rec["answers"][0]["new_cg_m"] == pytest.approx(float(32 * IN), rel=1e-12)
    # the smallest ballast that brings the state inside an envelope with that forward limit: the same
    env = '\n[[envelope]]\nname = "n"\naxis = "x"\npoints = [[32.0, 4000.0], [32.0, 6000.0], [40.0, 6000.0], [40.0, 4000.0]]\n'
    p = ledger_file(tmp_path, 4954.0, 30.5, env)
    rec = solve("ballast", p, "--station", 162)
    assert rec["answers"][0]["ballast_kg"] == pytest.approx(float(expect * LB), rel=1e-10)


def test_ballast_at_a_ballast_item_fixes_the_nose_heavy_loadout():
    # trainer-overweight nose-heavy: 1,340 lb; moments (file text) give the CG; tail ballast at FS 262
    # must bring it onto the forward limit FS 124.0 (vertical there): FAA-H-8083-1 ballast formula
    w = F(1100 + 150 + 90)
    x = F(1100 * 123 + 150 * 136 + 90 * 110) / w
    expect = w * (124 - x) / (262 - 124)
    rec = solve("ballast", OVER, "--loadout", "nose-heavy", "--item", "tail-ballast")
    assert rec["answers"][0]["ballast_kg"] == pytest.approx(float(expect * LB), rel=1e-9)
    assert rec["item_room_kg"] == pytest.approx(float(30 * LB), rel=1e-14)
    assert run_process("check", OVER, "--loadout", "nose-heavy").returncode == 1


def test_payload_remaining_stops_at_the_first_limit():
    # within-limits: 1,550 lb; baggage (FS 162) can take 100 lb (its full amount), the take-off
    # limit allows 210 lb more; the envelope is left either at its aft limit FS 132, after
    # W (132 − x) / (162 − 132) (FAA-H-8083-1 ballast formula), or at its top, 1,760 lb, whichever
    # comes first (the CG at 1,760 lb by moments must then still be ahead of FS 132).
    w = F(1100 + 40 + 170 + 90 + 150)
    x = F(1100 * 123 + 40 * 170 + 170 * 136 + 90 * 110 + 150 * 145) / w
    by_aft_limit = w * (132 - x) / (162 - 132)
    by_top = 1760 - w
    assert by_top < by_aft_limit and (w * x + by_top * 162) / 1760 < 132
    rec = solve("payload", OVER, "--loadout", "within-limits", "--item", "baggage")
    each = {e["by"]: e["kg"] for e in rec["each"]}
    assert each["envelope 'normal'"] == pytest.approx(float(by_top * LB), rel=1e-9)
    assert each["limit 'max-takeoff-mass'"] == pytest.approx(float(210 * LB), rel=1e-12)
    assert rec["payload_kg"] == pytest.approx(float(min(by_aft_limit, F(100), F(210)) * LB), rel=1e-9)
    assert rec["limited_by"] == "the room left in item 'baggage'"


def test_solve_bad_input_is_one_line(tmp_path):
    p = ledger_file(tmp_path, 4954.0, 30.5)
    process_one_line_error(run_process("solve", "ballast", p, "--station", 32.0, "--limit", 32.0), str(p), "limit station")
    process_one_line_error(run_process("solve", "ballast", p, "--station", "162 blorps", "--limit", 32.0), "--station")
    process_one_line_error(run_process("solve", "shift", p, "--from", 1, "--to", 2, "--envelope", "nope"), "--envelope", "nope")
    process_one_line_error(run_process("solve", "add", p, "--mass", 1, "--station", "25 %mac"), "--station", "%MAC")
    process_one_line_error(run_process("solve", "payload", TRAINER, "--item", "ghost"), "--item", "ghost")
    process_one_line_error(run_process("solve"), "MODE")


# --------------------------------------------------------------------------- rollup additions


def test_rollup_shows_percent_mac_and_both_margins():
    out = run_process("rollup", TRAINER, "--loadout", "takeoff")
    assert out.returncode == 0
    text = out.stdout
    assert "CG x [%MAC]" in text and "fwd [in]" in text and "aft [in]" in text
    # aft margin of "normal" at takeoff: 38.2 mm = 1.50 in (fixtures/README.md walk-through; 132 − CG)
    row = next(line for line in text.splitlines() if line.strip().startswith("normal"))
    assert row.split()[-2] == "1.50"
    assert max(len(line) for line in text.splitlines()) <= 80


def test_names_with_terminal_escapes_are_shown_not_obeyed(tmp_path):
    # common practice for terminal programs: control characters from data never reach the terminal raw
    text = OVER.read_text().replace('name = "ferry"', 'name = "ferry\\u001b[2J"').replace(
        'name = "normal"', 'name = "normal\\u001b]0;x\\u0007"')
    p = tmp_path / "esc.toml"
    p.write_text(text)
    out = run_process("check", p)
    assert out.returncode == 1
    assert "\x1b" not in out.stdout and "\x07" not in out.stdout and "ferry␛[2J" in out.stdout
    out = run_process("solve", "ballast", p, "--loadout", "nose-heavy", "--item", "tail-ballast")
    assert out.returncode == 0 and "\x1b" not in out.stdout
    out = run_process("rollup", p, "--loadout", "ferry\x1b[2J")
    assert out.returncode == 0 and "\x1b" not in out.stdout.split("CG envelopes")[1]
