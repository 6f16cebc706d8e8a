"""Scope and room left everywhere: the editor's totals, `rollup` and the report apply `check`'s scope rules.

A small invented survey drone (kg, m): an envelope scoped to another loadout
and a max_mass limit below the envelope's top. Every expected figure is worked
by hand in exact fractions from the file's numbers (first moments over mass,
common practice; margins as differences), never read from the program.
"""

from __future__ import annotations

import re
from fractions import Fraction as F

import pytest

from steelyard.core.limits.checks import check_ledger, check_rollup
from steelyard.core.limits.status import room_left
from steelyard.core.loading.loadout import resolve
from steelyard.core.physics.rollup import rollup_state
from support.cli import run_cli
from support.ledgers import ledger_from_text, write_ledger

DRONE = """steelyard = 1

[units]
mass = "kg"
length = "m"
inertia = "kg*m**2"

[frame]
x = "aft"
y = "right"
z = "up"

[[item]]
id = "frame"
name = "Airframe"
group = "structure"
mass = 1.5
cg = [0.25, 0.0, 0.0]

[[item]]
id = "battery"
name = "Flight battery"
group = "power"
mass = 0.75
cg = [0.20, 0.0, 0.0]

[[item]]
id = "camera"
name = "Survey camera"
group = "payload"
mass = 0.5
cg = [0.30, 0.0, 0.0]
variable = true

[[loadout]]
name = "survey"
[loadout.set]
camera = 1.0

[[loadout]]
name = "ferry"
[loadout.set]

[[envelope]]
name = "normal"
axis = "x"
points = [[0.15, 1.0], [0.15, 3.6], [0.35, 3.6], [0.35, 1.0]]

[[envelope]]
name = "ferry-only"
axis = "x"
loadouts = ["ferry"]
points = [[0.15, 1.0], [0.15, 2.5], [0.35, 2.5], [0.35, 1.0]]

[[limit]]
name = "mtow"
max_mass = 3.1
"""

# By hand (exact): survey carries all three items, ferry leaves the camera out.
SURVEY_MASS = F(3, 2) + F(3, 4) + F(1, 2)  # 11/4 kg
SURVEY_CG = (F(3, 2) * F(1, 4) + F(3, 4) * F(1, 5) + F(1, 2) * F(3, 10)) / SURVEY_MASS  # 27/110 m
FERRY_MASS = F(3, 2) + F(3, 4)  # 9/4 kg
MTOW, NORMAL_TOP, FERRY_TOP = F(31, 10), F(18, 5), F(5, 2)  # the rectangles' tops are flat at any CG inside


def _close(a: float, b: F) -> bool:
    return abs(F(a) - b) <= F(1, 10**12) * max(1, abs(b))


def _state(ledger, name):
    return rollup_state(resolve(ledger, name))


def test_hand_figures_are_consistent():
    assert SURVEY_MASS == F(11, 4) and SURVEY_CG == F(27, 110)
    assert F(3, 20) < SURVEY_CG < F(7, 20)  # inside the rectangles' CG range: their top is the flat one


@pytest.mark.parametrize("loadout, room, kind, name", [
    # survey: envelope top 18/5 - 11/4 = 17/20 (0.85 kg, what the strip showed), mass limit 31/10 - 11/4 = 7/20
    ("survey", MTOW - SURVEY_MASS, "mass", "mtow"),
    # ferry: its own envelope's top 5/2 - 9/4 = 1/4 is below mtow (17/20) and normal (27/20)
    ("ferry", FERRY_TOP - FERRY_MASS, "envelope", "ferry-only"),
])
def test_room_left_is_the_least_of_every_applicable_bound(loadout, room, kind, name):
    ledger = ledger_from_text(DRONE)
    checked = check_rollup(ledger, loadout, _state(ledger, loadout))
    got = room_left(checked.findings)
    assert _close(got.mass, room) and (got.kind, got.name) == (kind, name)


def test_survey_room_is_not_the_envelope_top():
    ledger = ledger_from_text(DRONE)
    checked = check_rollup(ledger, "survey", _state(ledger, "survey"))
    normal = next(f for f in checked.findings if f.name == "normal")
    assert _close(normal.mass_margin, NORMAL_TOP - SURVEY_MASS)  # 17/20: the envelope alone
    assert _close(room_left(checked.findings).mass, F(7, 20))  # 7/20: the limit binds


def test_editor_check_is_the_commands_check():
    """check_rollup (editor, rollup, report) gives exactly check_ledger's findings for the loadout state."""
    ledger = ledger_from_text(DRONE)
    for name in ("survey", "ferry"):
        whole = next(s for s in check_ledger(ledger).states if s.name == name)
        assert check_rollup(ledger, name, _state(ledger, name)).findings == whole.findings
    survey = check_rollup(ledger, "survey", _state(ledger, "survey"))
    applies = {f.name: f.applies for f in survey.findings}
    assert applies == {"normal": True, "ferry-only": False, "mtow": True}  # its scope names ferry only


def test_no_loadout_state_is_outside_no_scoped_envelope():
    """The vehicle with variable items empty carries no loadout tag: a loadout-scoped envelope leaves it out."""
    ledger = ledger_from_text(DRONE)
    checked = check_rollup(ledger, None, _state(ledger, None))
    assert {f.name: f.applies for f in checked.findings}["ferry-only"] is False
    got = room_left(checked.findings)
    assert _close(got.mass, MTOW - FERRY_MASS) and got.name == "mtow"  # 17/20 < normal's 27/20


def _number_after(text: str, label: str) -> float:
    m = re.search(re.escape(label) + r"\s*([0-9][0-9,]*\.?[0-9]*)", text)
    assert m, f"{label!r} not in:\n{text}"
    return float(m.group(1).replace(",", ""))


def test_rollup_text_scopes_and_shows_the_limit(tmp_path):
    path = write_ledger(tmp_path, DRONE)
    rc, out, err = run_cli("rollup", str(path), "--loadout", "survey")
    assert rc == 0, err
    row = next(line for line in out.splitlines() if line.strip().startswith("ferry-only"))
    assert "OUTSIDE" not in row and "n/a" in row  # check says it does not apply to survey
    assert 'mass limit "mtow"' in out and "does not apply" in out
    assert abs(_number_after(out, "Room left:") - 0.35) < 5e-3  # 7/20 kg, shown to the display precision
    assert 'mass limit "mtow" binds' in out


def test_rollup_json_keeps_its_keys(tmp_path):
    """The JSON contract (docs/contracts.md) is unchanged: same envelope keys as before."""
    import json

    path = write_ledger(tmp_path, DRONE)
    rc, out, err = run_cli("rollup", str(path), "--loadout", "survey", "--json")
    assert rc == 0, err
    env = json.loads(out)["envelopes"]
    assert {e["name"] for e in env} == {"normal", "ferry-only"}


def test_report_scopes_and_lists_limits(tmp_path):
    path = write_ledger(tmp_path, DRONE)
    target = tmp_path / "review.md"
    rc, out, err = run_cli("report", str(path), "-o", str(target))
    assert rc == 0, err
    text = target.read_text()
    row = next(line for line in text.splitlines() if line.startswith("| survey | ferry-only"))
    assert "does not apply" in row and "OUTSIDE" not in row
    section = text.split("## Limits and room left", 1)[1].split("\n## ", 1)[0]
    survey = next(line for line in section.splitlines() if line.startswith("| survey | Room left"))
    ferry = next(line for line in section.splitlines() if line.startswith("| ferry | Room left"))
    assert abs(_number_after(survey, "Room left:") - 0.35) < 5e-3 and "mtow" in survey  # 7/20
    assert abs(_number_after(ferry, "Room left:") - 0.25) < 5e-3 and "ferry-only" in ferry  # 1/4
