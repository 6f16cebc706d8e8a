"""`steelyard weigh`: the AMT General Handbook weighing example through the command line.

Expected values are recomputed here with exact fractions from the handbook
formulas (FAA-H-8083-1 and FAA-H-8083-30 ch. 4: net = reading - tare, CG =
Σ moment / Σ weight, empty = weighed - on board + missing) and the NIST SP 811
exact factors 1 lb = 0.45359237 kg, 1 in = 0.0254 m, 1 US gal = 231 in³.
"""

import hashlib
import json
import shutil
import subprocess
import sys
import tomllib
from fractions import Fraction as F
from pathlib import Path

import pytest

from steelyard.io.ledger.file import load_ledger

ROOT = Path(__file__).resolve().parents[1]
FIXTURE = ROOT / "fixtures" / "weighing-example.toml"
LB, IN = F("0.45359237"), F("0.0254")  # NIST SP 811, exact

# AMT General Handbook ch. 4 example inputs (figure numbers from memory): mains at
# +70 in, nose at -30 in; readings 650, 640, 225 lb; tares 5, 5, 2.5 lb; 30 gal of
# fuel at +95 in at 5.9 lb/gal on board, 6 lb unusable at +98 in belongs to the
# empty weight. Lateral positions -45 / +45 / 0 in are invented in the fixture.
ARMS = [F(70), F(70), F(-30)]
SIDES = [F(-45), F(45), F(0)]
READINGS = [F(650), F(640), F(225)]
TARES = [F(5), F(5), F(5, 2)]


def run(*args, cwd=None):
    return subprocess.run([sys.executable, "-m", "steelyard", *map(str, args)], capture_output=True, text=True,
                          cwd=cwd)


def digest(p: Path) -> str:
    return hashlib.sha256(p.read_bytes()).hexdigest()


def handbook():
    net = [r - t for r, t in zip(READINGS, TARES)]
    weighed = sum(net)
    moment = sum(n * a for n, a in zip(net, ARMS))
    fuel = 30 * F(59, 10)  # 30 gal x 5.9 lb/gal = 177 lb
    empty = weighed - fuel + 6
    empty_moment = moment - fuel * 95 + 6 * 98
    side = sum(n * y for n, y in zip(net, SIDES))  # fuel lies on the centre line
    return net, weighed, moment, empty, empty_moment, side


def close(a, b, rel=1e-13):
    return a == pytest.approx(float(b), rel=rel, abs=1e-15)


def test_handbook_example_weigh_json():
    out = run("weigh", FIXTURE, "--json")
    assert out.returncode == 0, out.stderr
    rec = json.loads(out.stdout)
    net, weighed, moment, empty, empty_moment, side = handbook()
    # the handbook's stated results: 1,331.5 lb and 66,698 lb-in, CG +50.09 in
    assert empty == F(2663, 2) and empty_moment == 66698
    assert [p["name"] for p in rec["points"]] == ["left main", "right main", "nose"]
    for p, n in zip(rec["points"], net):
        assert close(p["net_kg"], n * LB)
    assert close(rec["weighed_mass_kg"], weighed * LB)
    assert close(rec["weighed_cg_m"][0], moment / weighed * IN)
    assert rec["weighed_cg_m"][2] is None  # a level weighing does not find the vertical CG
    assert close(rec["on_board"][0]["mass_kg"], 177 * LB)  # 30 gal x 5.9 lb/gal
    assert close(rec["missing"][0]["mass_kg"], 6 * LB)
    assert close(rec["empty_mass_kg"], empty * LB)
    assert close(rec["empty_cg_m"][0], empty_moment / empty * IN)
    assert close(rec["empty_cg_m"][1], side / empty * IN)
    assert round(rec["empty_cg_m"][0] / float(IN), 2) == 50.09  # handbook: empty CG +50.09 in
    assert round(rec["empty_mass_kg"] / float(LB), 1) == 1331.5  # handbook: empty weight 1,331.5 lb


def test_comparison_with_the_estimated_item():
    raw = tomllib.loads(FIXTURE.read_text())
    old = next(it for it in raw["item"] if it["id"] == "empty-vehicle")
    rec = json.loads(run("weigh", FIXTURE, "--json").stdout)
    _, _, _, empty, empty_moment, side = handbook()
    c = rec["comparison"]
    assert c["item"] == "empty-vehicle"
    assert close(c["old_mass_kg"], F(old["mass"]) * LB)
    assert close(c["new_mass_kg"], empty * LB)
    assert close(c["delta_mass_kg"], (empty - F(old["mass"])) * LB)
    assert close(c["delta_cg_m"][0], (empty_moment / empty - F(old["cg"][0])) * IN)
    # the vertical CG is not weighed: the item keeps its estimate, so no change
    assert close(c["new_cg_m"][2], F(old["cg"][2]) * IN) and c["delta_cg_m"][2] == 0


def test_human_output_shows_the_handbook_figures():
    out = run("weigh", FIXTURE)
    assert out.returncode == 0, out.stderr
    # 1,331.5 lb and 66,698 / 1,331.5 = 50.0924 in (AMT General Handbook ch. 4)
    # docs/numbers.md: 5 significant figures at the weighed mass (1,502.5 lb: 1 decimal)
    assert "1,331.5 " in out.stdout and "50.092" in out.stdout
    assert "222.5 " in out.stdout  # nose net: 225 - 2.5
    assert "full fuel" in out.stdout and "unusable fuel" in out.stdout


def test_apply_in_place_keeps_comments_and_layout(tmp_path):
    import difflib

    path = tmp_path / "w.toml"
    shutil.copy(FIXTURE, path)
    before = path.read_text()
    out = run("weigh", path, "--apply")  # no --force needed: nothing is lost
    assert out.returncode == 0, out.stderr
    after = path.read_text()
    # difflib (Python standard library) of the two texts: only the weighed item's mass, CG x and
    # maturity lines change, and the change-log entry is added; every comment line is still there
    removed = [line for line in difflib.ndiff(before.splitlines(), after.splitlines()) if line.startswith("- ")]
    assert removed == ["- mass = 1310.0", "- cg = [49.0, 0.0, 28.0]", '- maturity = "estimated"']
    assert [t for t in before.splitlines() if t.startswith("#")] == [t for t in after.splitlines() if t.startswith("#")]
    assert "[[change]]" in after and load_ledger(path).item("empty-vehicle").maturity == "measured"


def test_apply_to_other_file_replaces_item_and_logs_change(tmp_path):
    src = tmp_path / "w.toml"
    shutil.copy(FIXTURE, src)
    dst = tmp_path / "weighed.toml"
    out = run("weigh", src, "--apply", "-o", dst, "--author", "J. Tester", "--json")
    assert out.returncode == 0, out.stderr
    assert json.loads(out.stdout)["applied"]["file"] == str(dst)
    ledger = load_ledger(dst)
    item = ledger.item("empty-vehicle")
    _, _, _, empty, empty_moment, _ = handbook()
    # saved in lb / in through the canonical writer (2 ulps at most)
    assert item.mass == pytest.approx(float(empty * LB), rel=1e-15)
    assert item.cg[0] == pytest.approx(float(empty_moment / empty * IN), rel=1e-15)
    assert item.cg[2] == pytest.approx(float(28 * IN), rel=1e-15)  # kept: level weighing
    assert item.maturity == "measured"
    log = ledger.changes
    assert len(log) == 1
    entry = log[0]
    assert (entry["action"], entry["item"], entry["author"]) == ("weighing", "empty-vehicle", "J. Tester")
    # the log holds 6 significant figures: within half a unit of the 6th (relative 5e-6)
    assert entry["before"]["mass_kg"] == pytest.approx(float(1310 * LB), rel=5e-6)
    assert entry["after"]["mass_kg"] == pytest.approx(float(empty * LB), rel=5e-6)
    assert entry["d_mass_kg"] == pytest.approx(float((empty - 1310) * LB), rel=5e-6)
    # a second weighing in place keeps the first entry
    again = run("weigh", dst, "--apply")
    assert again.returncode == 0, again.stderr
    log = load_ledger(dst).changes
    assert [e["action"] for e in log] == ["weighing", "weighing"]
    assert log[0]["author"] == "J. Tester"


def test_apply_will_not_replace_existing_output(tmp_path):
    other = tmp_path / "other.toml"
    other.write_text("steelyard = 1\n")
    before = digest(other)
    out = run("weigh", FIXTURE, "--apply", "-o", other)
    assert out.returncode == 2 and "--force" in out.stderr
    assert digest(other) == before


@pytest.mark.parametrize("text,parts", [
    ("steelyard = 1\n[[item]]\nid = \"a\"\nmass = 1.0\ncg = [0, 0, 0]\n", ["weighing", "no [weighing]"]),
    ("steelyard = 1\n[units]\nmass = \"lb\"\nlength = \"in\"\n[[item]]\nid = \"a\"\nmass = 1.0\ncg = [0, 0, 0]\n"
     "[weighing]\n[[weighing.point]]\nname = \"nose\"\nat = [0, 0, 0]\nreading = 10\ntare = 12\n",
     ["weighing point 'nose'", "tare"]),
    ("steelyard = 1\n[[item]]\nid = \"a\"\nmass = 1.0\ncg = [0, 0, 0]\n"
     "[weighing]\nreplaces = \"ghost\"\n[[weighing.point]]\nname = \"p\"\nat = [0, 0, 0]\nreading = 10\ntare = 0\n",
     ["replaces", "ghost"]),
])
def test_bad_weighing_is_one_line_exit_2(tmp_path, text, parts):
    path = tmp_path / "bad.toml"
    path.write_text(text)
    out = run("weigh", path)
    assert out.returncode == 2
    line = out.stderr.strip()
    assert len(line.splitlines()) == 1 and "Traceback" not in out.stderr
    assert str(path) in line
    for part in parts:
        assert part in line, (part, line)


def test_output_without_apply_is_usage_error():
    out = run("weigh", FIXTURE, "-o", "x.toml")
    assert out.returncode == 2 and "--apply" in out.stderr


def test_names_with_terminal_escapes_are_not_sent_raw(tmp_path):
    # common practice: text from a file never reaches the terminal as control sequences
    text = FIXTURE.read_text().replace('name = "left main"', 'name = "left\\u001b[2J main"')
    path = tmp_path / "esc.toml"
    path.write_text(text)
    out = run("weigh", path)
    assert out.returncode == 0, out.stderr
    assert "\x1b" not in out.stdout and "left?[2J" in out.stdout  # (the cell wraps before "main")
