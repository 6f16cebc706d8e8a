"""Loadouts beyond the contract: `base`, removable items (`off` / `on`), `condition`, tank CG tables.

Expected values are worked out here from the file text with exact fractions:
CG = Σ moment / Σ weight (FAA-H-8083-1), NIST SP 811 exact factors; a tank's
CG between two table rows by linear interpolation (its definition); own
inertia of a part-filled tank scaled with the mass carried (common practice)
and moved to the combined CG with the parallel-axis theorem
I_O = I_C + m(|d|²E − d dᵀ) (REFERENCES.md, inertia).
"""

from __future__ import annotations

import tomllib
from fractions import Fraction as F

import numpy as np
import pytest

from steelyard.core.errors import SteelyardError
from steelyard.core.loading.loadout import fill_fractions, loadout_condition, resolve
from steelyard.core.physics.rollup import rollup_state
from support.exact import carried
from support.exact import exact_cg as exact
from support.ledgers import ledger_from_text as ledger
from support.paths import ROOT
from support.units import IN, LB

BASE = '''steelyard = 1
[units]
mass = "lb"
length = "in"
inertia = "lb*in**2"

[[item]]
id = "airframe"
mass = 1000.0
cg = [120.0, 0.0, 20.0]

[[item]]
id = "pod"
mass = 40.0
cg = [170.0, 0.0, -10.0]
removable = true

[[item]]
id = "seat-2"
mass = 15.0
cg = [136.0, 11.0, 8.0]
removable = true

[[item]]
id = "pilot"
mass = 250.0
cg = [136.0, -11.0, 20.0]
variable = true

[[item]]
id = "fuel"
mass = 120.0
cg = [133.0, 0.0, 40.0]
density = "6 lb/gal"
variable = true
'''


# --------------------------------------------------------------------------- base, off, on


LOADOUTS = BASE + '''
[[loadout]]
name = "cargo"
[loadout.set]
pilot = "180 lb"
fuel = 1.0

[[loadout]]
name = "solo"
base = "cargo"
off = ["pod", "seat-2"]
[loadout.set]
fuel = "10 gal"

[[loadout]]
name = "solo-seat"
base = "solo"
on = ["seat-2"]
condition = "landing"
'''


def test_base_overrides_and_removable_items_follow_moments():
    led = ledger(LOADOUTS)
    # cargo: everything fitted; pilot 180 lb, full fuel 120 lb
    w, x = exact([(F(1000), F(120)), (F(40), F(170)), (F(15), F(136)), (F(180), F(136)), (F(120), F(133))])
    mp = rollup_state(resolve(led, "cargo"))
    assert mp.mass == pytest.approx(float(w * LB), rel=1e-14)
    assert mp.cg[0] == pytest.approx(float(x * IN), rel=1e-13)
    # solo = cargo with pod and second seat off, fuel overridden to 10 gal x 6 lb/gal (AMT handbook avgas)
    w, x = exact([(F(1000), F(120)), (F(180), F(136)), (F(60), F(133))])
    mp = rollup_state(resolve(led, "solo"))
    assert mp.mass == pytest.approx(float(w * LB), rel=1e-14)
    assert mp.cg[0] == pytest.approx(float(x * IN), rel=1e-13)
    # solo-seat fits the seat again over its base
    w, x = exact([(F(1000), F(120)), (F(15), F(136)), (F(180), F(136)), (F(60), F(133))])
    mp = rollup_state(resolve(led, "solo-seat"))
    assert mp.mass == pytest.approx(float(w * LB), rel=1e-14)
    assert mp.cg[0] == pytest.approx(float(x * IN), rel=1e-13)
    fill = fill_fractions(led, "solo")
    assert fill[led.index["pod"]] == 0.0 and fill[led.index["airframe"]] == 1.0


def test_condition_is_inherited_and_defaults_to_takeoff():
    # design rule (docs/loadouts.md): a loadout's own condition, else its base's, else takeoff
    led = ledger(LOADOUTS + '''
[[loadout]]
name = "after-landing"
base = "solo-seat"
''')
    assert loadout_condition(led, "cargo") == "takeoff"
    assert loadout_condition(led, "solo-seat") == "landing"
    assert loadout_condition(led, "after-landing") == "landing"


@pytest.mark.parametrize("extra,field,words", [
    ('off = ["airframe"]', "off", "not removable"),
    ('off = ["ghost"]', "off", "unknown item"),
    ('off = ["pilot"]', "off", "variable"),
    ('off = "pod"\non = ["pod"]', "on", "both off and on"),
    ('off = [1]', "off", "list of item ids"),
    ('condition = "cruise"', "condition", "ramp, takeoff, landing"),
])
def test_bad_loadout_keys_name_loadout_and_field(extra, field, words):
    with pytest.raises(SteelyardError) as e:  # refused when the file is read (strict reader)
        ledger(BASE + f'\n[[loadout]]\nname = "bad"\n{extra}\n')
    text = str(e.value)
    assert "loadout 'bad'" in text and field in text and words in text and "\n" not in text


def test_base_loop_is_an_error_naming_the_loop():
    with pytest.raises(SteelyardError) as e:  # refused when the file is read (strict reader)
        ledger(BASE + '''
[[loadout]]
name = "a"
base = "b"
[[loadout]]
name = "b"
base = "a"
''')
    assert "loadout 'a'" in str(e.value) and "base" in str(e.value) and "a -> b -> a" in str(e.value)


# --------------------------------------------------------------------------- tank CG tables

TANK = BASE + '''
[[item]]
id = "aux"
mass = 150.0
cg = [145.0, 2.0, 38.0]
variable = true
shape = { kind = "box", size = [20.0, 30.0, 10.0] }
cg_table = [[0.1, 141.0, 0.0, 30.0], [0.5, 143.0, 1.0, 34.0], [1.0, 145.0, 2.0, 38.0]]

[[loadout]]
name = "aux-at"
[loadout.set]
aux = 0.3
'''


def interp(table, f):
    """Linear interpolation between rows (exact), flat below the first row (docs/loadouts.md)."""
    if f <= table[0][0]:
        return table[0][1:]
    for a, b in zip(table, table[1:]):
        if a[0] <= f <= b[0]:
            u = (f - a[0]) / (b[0] - a[0])
            return [a[k] + u * (b[k] - a[k]) for k in (1, 2, 3)]
    raise AssertionError("fraction beyond the table")


TABLE = [[F("0.1"), F(141), F(0), F(30)], [F("0.5"), F(143), F(1), F(34)], [F(1), F(145), F(2), F(38)]]


@pytest.mark.parametrize("fill", ["0.05", "0.1", "0.3", "0.5", "0.8", "1"])
def test_tank_cg_follows_the_table(fill):
    f = F(fill)
    led = ledger(TANK.replace("aux = 0.3", f"aux = {fill}"))
    state = resolve(led, "aux-at")
    want = interp(TABLE, f)
    got = state.cg[led.index["aux"]]
    np.testing.assert_allclose(got, [float(c * IN) for c in want], rtol=1e-14, atol=1e-15)
    # the roll-up uses it: CG = Σ moment / Σ weight over airframe, pod, seat-2 and the tank contents
    w, x = exact([(F(1000), F(120)), (F(40), F(170)), (F(15), F(136)), (150 * f, want[0])])
    mp = rollup_state(state)
    assert mp.cg[0] == pytest.approx(float(x * IN), rel=1e-13)
    assert mp.mass == pytest.approx(float(w * LB), rel=1e-14)


def test_part_filled_tank_inertia_is_scaled_with_mass_about_its_moved_cg():
    # common practice: the contents' own inertia scales with the mass carried; parallel axis to the CG
    led = ledger(TANK)
    mp = rollup_state(resolve(led, "aux-at"))
    f = 0.3
    m = np.array([1000.0, 40.0, 15.0, 150.0 * f]) * float(LB)
    pos = np.array([[120.0, 0.0, 20.0], [170.0, 0.0, -10.0], [136.0, 11.0, 8.0],
                    [float(c) for c in interp(TABLE, F("0.3"))]]) * float(IN)
    a, b, c = 20.0 * float(IN), 30.0 * float(IN), 10.0 * float(IN)
    box = 150.0 * float(LB) * np.diag([b * b + c * c, a * a + c * c, a * a + b * b]) / 12  # handbook box formula
    cg = (m @ pos) / m.sum()
    d = pos - cg
    want = f * box + sum(mi * (di @ di * np.eye(3) - np.outer(di, di)) for mi, di in zip(m, d))
    np.testing.assert_allclose(mp.inertia_cg, want, rtol=1e-10, atol=1e-12)


@pytest.mark.parametrize("table,words", [
    ("[[0.0, 141.0, 0.0, 30.0], [1.0, 146.0, 2.0, 38.0]]", "must equal the item's cg"),
    ("[[0.0, 141.0, 0.0, 30.0], [0.9, 145.0, 2.0, 38.0]]", "fraction 1"),
    ("[[0.5, 141.0, 0.0, 30.0], [0.5, 143.0, 0.0, 30.0], [1.0, 145.0, 2.0, 38.0]]", "increase"),
    ("[[1.0, 145.0, 2.0, 38.0]]", "at least 2 rows"),
    ("[[0.0, 141.0, 0.0], [1.0, 145.0, 2.0, 38.0]]", "[fraction, x, y, z]"),
    ("[[0.0, \"3 blorps\", 0.0, 30.0], [1.0, 145.0, 2.0, 38.0]]", "blorps"),
])
def test_bad_cg_table_names_item_and_field(table, words):
    with pytest.raises(SteelyardError) as e:  # refused when the file is read (strict reader)
        ledger(TANK.replace(
            "cg_table = [[0.1, 141.0, 0.0, 30.0], [0.5, 143.0, 1.0, 34.0], [1.0, 145.0, 2.0, 38.0]]",
            f"cg_table = {table}"))
    assert "item 'aux'" in str(e.value) and "cg_table" in str(e.value) and words in str(e.value)


def test_cg_table_on_a_fixed_item_is_rejected():
    with pytest.raises(SteelyardError, match="only a variable item"):  # refused when the file is read
        ledger(BASE.replace('mass = 40.0\ncg = [170.0, 0.0, -10.0]',
                            'mass = 40.0\ncg = [170.0, 0.0, -10.0]\ncg_table = [[0.0, 1, 2, 3], [1.0, 170, 0, -10]]'))


# --------------------------------------------------------------------------- the shipped files


def test_demo_is_a_byte_copy_of_the_trainer():
    # fixtures/README.md: src/steelyard/demo/demo.toml is an exact copy of trainer.toml
    assert (ROOT / "src/steelyard/demo/demo.toml").read_bytes() == (ROOT / "fixtures/trainer.toml").read_bytes()


def test_trainer_walk_through_still_holds():
    # DESIGN.md journey 1 on the takeoff loadout: a 2.3 lb item at FS 142 moves the CG 0.4 mm aft and
    # the aft margin of "normal" (vertical aft limit FS 132.0 from the file) drops from 38.2 to 37.8 mm.
    # Weight added / new total = ΔCG / (station − old CG) (FAA-H-8083-1), exact roll-up of the file text.
    data = tomllib.loads((ROOT / "fixtures/trainer.toml").read_text())
    units = {"lb": F(1), "kg": 1 / LB, "gal": F(6)}  # masses in lb; fuel 6 lb/gal from the file
    w, x = exact([(m, it["cg"][0]) for it, m in carried(data, "takeoff", units)])
    dx = F("2.3") * (142 - x) / (w + F("2.3"))
    assert round(float(dx * IN * 1000), 1) == 0.4
    assert round(float((132 - x) * IN * 1000), 1) == 38.2
    assert round(float((132 - x - dx) * IN * 1000), 1) == 37.8
    # and the program agrees on the loadout as shipped
    led = ledger((ROOT / "fixtures/trainer.toml").read_text())
    mp = rollup_state(resolve(led, "takeoff"))
    assert mp.cg[0] == pytest.approx(float(x * IN), rel=1e-13)
