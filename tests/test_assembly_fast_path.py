"""The fast placement path (bulk columns, copies from a per-child plan, parent checks seeded from its
children) against a plain reference computed one item at a time.

Reference: each placed file is read with the standard library's tomllib, its numbers converted with
the exact factors of NIST SP 811 (1 lb = 0.45359237 kg, 1 in = 0.0254 m), a box's own inertia from
the solid-box formula I = m (b² + c²) / 12 ... (handbook formula), and every item moved by plain numpy
loops: p -> at + T·p, I -> T·I·Tᵀ, T = R·M·A built by hand (R of each turn written out, applied left
to right; M the mirror; A the frame alignment). Nothing expected comes from steelyard's output.
"""

from __future__ import annotations

import math
import sys
import tomllib
from pathlib import Path

import numpy as np
import pytest

from support.cli import one_line_error, run_main

from steelyard.core.control.growth import growth_fractions
from steelyard.core.document.model import ItemArrays
from steelyard.core.loading.loadout import resolve
from steelyard.core.loading.tank import tank_tables
from steelyard.core.physics.rollup import rollup_state
from steelyard.io.ledger.file import open_ledger

sys.path.insert(0, str(Path(__file__).resolve().parent / "perf"))
from make_ledger import ledger_text  # noqa: E402

LB, IN = 0.45359237, 0.0254  # NIST SP 811 Appendix B, exact


def _turn(axis: str, degrees: float) -> np.ndarray:
    """Active right-handed rotation about a fixed axis (common practice)."""
    c, s = math.cos(math.radians(degrees)), math.sin(math.radians(degrees))
    if axis == "x":
        return np.array([[1, 0, 0], [0, c, -s], [0, s, c]])
    if axis == "y":
        return np.array([[c, 0, s], [0, 1, 0], [-s, 0, c]])
    return np.array([[c, -s, 0], [s, c, 0], [0, 0, 1]])


def _t(turns, mirror=None, align=np.eye(3)) -> np.ndarray:
    r = np.eye(3)
    for axis, deg in turns:  # each turn about the parent's fixed axes, left to right
        r = _turn(axis, deg) @ r
    m = np.eye(3)
    if mirror is not None:
        m["xyz".index(mirror), "xyz".index(mirror)] = -1.0
    return r @ m @ align


def _reference_rows(path: Path) -> list[dict]:
    """Each item of a generated (lb, in, lb*in**2) file in SI, from tomllib."""
    data = tomllib.loads(path.read_text())
    rows = []
    for it in data["item"]:
        mass = it["mass"] * LB
        own = np.zeros((3, 3))
        if "inertia" in it:
            k = LB * IN * IN
            t = it["inertia"]
            own = k * np.array([[t["xx"], -t["xy"], -t["xz"]], [-t["xy"], t["yy"], -t["yz"]],
                                [-t["xz"], -t["yz"], t["zz"]]])
        elif "shape" in it:
            a, b, c = (x * IN for x in it["shape"]["size"])
            own = mass / 12.0 * np.diag([b * b + c * c, a * a + c * c, a * a + b * b])
        rows.append({"id": it["id"], "group": it.get("group", ""), "mass": mass, "q": it.get("quantity", 1),
                     "cg": np.array(it["cg"], float) * IN, "own": own, "variable": it.get("variable", False)})
    return rows


def _moved(rows, t, at, id_prefix, group_prefix):
    out = []
    for r in rows:  # one item at a time
        out.append(dict(r, id=f"{id_prefix}/{r['id']}", group=f"{group_prefix}/{r['group']}" if r["group"]
                        else group_prefix, cg=np.asarray(at) + t @ r["cg"], own=t @ r["own"] @ t.T))
    return out


def _forward_left_up(text: str) -> str:
    return text.replace('x = "aft"\ny = "right"\nz = "up"', 'x = "fwd"\ny = "left"\nz = "up"')


TOP = """steelyard = 1
[[item]]
id = "frame"
mass = 12.0
cg = [2.0, 0.0, 0.3]

[[assembly]]
id = "a-left"
file = "parts/a.toml"
group = "wings"
at = [1.0, -2.0, 0.5]
mirror = "y"
rotate = [["z", 180.0]]

[[assembly]]
id = "a-right"
file = "parts/a.toml"
group = "wings"
at = [1.0, 2.0, 0.5]
rotate = [["y", -20.0], ["x", 12.5]]

[[assembly]]
id = "mid-1"
file = "mid.toml"
at = [3.0, 0.0, 0.0]
mirror = "x"
rotate = [["z", 45.0]]
"""

MID = """steelyard = 1
[[item]]
id = "bracket"
mass = 0.75
cg = [0.1, 0.05, 0.0]

[[assembly]]
id = "b1"
file = "parts/b.toml"
at = [0.1, 0.2, 0.3]
rotate = [["x", 90.0], ["z", 30.0]]
"""


@pytest.fixture(scope="module")
def tree(tmp_path_factory) -> Path:
    root = tmp_path_factory.mktemp("tree")
    (root / "parts").mkdir()
    (root / "parts" / "a.toml").write_text(_forward_left_up(ledger_text(120, seed=5)))
    (root / "parts" / "b.toml").write_text(ledger_text(90, seed=6))
    (root / "mid.toml").write_text(MID)
    (root / "top.toml").write_text(TOP)
    return root


def _expected(root: Path) -> list[dict]:
    a = _reference_rows(root / "parts" / "a.toml")
    b = _reference_rows(root / "parts" / "b.toml")
    align_a = np.diag([-1.0, -1.0, 1.0])  # a's fwd/left/up against the parent's aft/right/up
    rows = [{"id": "frame", "group": "", "mass": 12.0, "q": 1, "cg": np.array([2.0, 0.0, 0.3]),
             "own": np.zeros((3, 3)), "variable": False}]
    rows += _moved(a, _t([("z", 180.0)], "y", align_a), [1.0, -2.0, 0.5], "a-left", "wings/a-left")
    rows += _moved(a, _t([("y", -20.0), ("x", 12.5)], None, align_a), [1.0, 2.0, 0.5], "a-right", "wings/a-right")
    mid = [{"id": "bracket", "group": "", "mass": 0.75, "q": 1, "cg": np.array([0.1, 0.05, 0.0]),
            "own": np.zeros((3, 3)), "variable": False}]
    mid += _moved(b, _t([("x", 90.0), ("z", 30.0)]), [0.1, 0.2, 0.3], "b1", "b1")
    rows += _moved(mid, _t([("z", 45.0)], "x"), [3.0, 0.0, 0.0], "mid-1", "mid-1")
    return rows


def _close(a, e, rel=1e-12):
    a, e = np.asarray(a, float), np.asarray(e, float)
    assert np.abs(a - e).max() <= rel * max(np.abs(e).max(), 1e-300), (a, e)


def test_fast_placement_equals_the_per_item_reference(tree):
    led = open_ledger(tree / "top.toml").ledger
    expected = _expected(tree)
    assert [it.id for it in led.items] == [r["id"] for r in expected]
    assert [it.group for it in led.items] == [r["group"] for r in expected]
    arrays = led.arrays
    _close(arrays.unit_mass, [r["mass"] for r in expected], 1e-15)
    assert arrays.quantity.tolist() == [r["q"] for r in expected]
    assert arrays.variable.tolist() == [r["variable"] for r in expected]
    _close(arrays.cg, np.array([r["cg"] for r in expected]))
    for i, r in enumerate(expected):  # own inertia, item by item
        if r["own"].any():
            _close(arrays.own[i], r["own"])
        else:
            assert not arrays.own[i].any()
    # the placed Item objects say the same as the columns (what an edit rebuilds columns from)
    again = ItemArrays.from_items(led.items)
    _close(again.cg, arrays.cg, 1e-15)
    for i in range(len(expected)):
        assert np.abs(again.own[i] - arrays.own[i]).max() <= 1e-14 * max(np.abs(arrays.own[i]).max(), 1e-300)


def test_tree_totals_equal_the_reference_summed_one_item_at_a_time(tree):
    led = open_ledger(tree / "top.toml").ledger
    state = rollup_state(resolve(led, None))  # no loadout: variable items carry nothing
    m = sum(r["mass"] * r["q"] for r in _expected(tree) if not r["variable"])
    moment = sum(r["mass"] * r["q"] * r["cg"] for r in _expected(tree) if not r["variable"])
    cg = moment / m
    inertia = np.zeros((3, 3))
    for r in _expected(tree):
        if r["variable"]:
            continue
        d = r["cg"] - cg  # parallel-axis theorem, common practice
        inertia += r["q"] * (r["own"] + r["mass"] * (d @ d * np.eye(3) - np.outer(d, d)))
    assert state.mass == pytest.approx(m, rel=1e-13)
    _close(state.cg, cg, 1e-12)
    _close(state.inertia_cg, inertia, 1e-10)


def test_one_file_placed_twice_is_gathered_once_and_both_copies_differ(tree):
    led = open_ledger(tree / "top.toml").ledger
    left = [q for q in led.placed if q.id == "a-left"][0]
    right = [q for q in led.placed if q.id == "a-right"][0]
    assert left.ledger is right.ledger  # read and parsed once
    assert left.ledger.__dict__.get("_placing") is not None
    assert not np.allclose(led.arrays.cg[left.rows], led.arrays.cg[right.rows])


# ------------------------------------------------------------------ the parent's checks, seeded from the children

POD = """steelyard = 1
[growth]
estimated = 0.4
[[item]]
id = "motor"
mass = 2.0
cg = [0.1, 0.0, 0.05]
maturity = "estimated"
[[item]]
id = "arm"
mass = 1.0
cg = [-0.4, 0.0, 0.0]
growth = 0.125
[[item]]
id = "tank"
mass = 4.0
cg = [0.2, 0.0, 0.1]
variable = true
cg_table = [[0.0, 0.2, 0.0, 0.0], [1.0, 0.2, 0.0, 0.1]]
[[item]]
id = "cable"
mass = 0.5
cg = [0.0, 0.1, 0.0]
tolerance = { mass = 0.05, cg = [0.01, 0.02, 0.0], kind = "sigma" }
"""


def _pod_tree(tmp_path: Path, pod: str, growth: str = "") -> Path:
    (tmp_path / "pods").mkdir(parents=True, exist_ok=True)
    (tmp_path / "pods" / "pod.toml").write_text(pod)
    top = tmp_path / "vehicle.toml"
    top.write_text(f"""steelyard = 1
{growth}
[[item]]
id = "hull"
mass = 10.0
cg = [1.0, 0.0, 0.0]
maturity = "layout"
[[assembly]]
id = "pod"
file = "pods/pod.toml"
at = [1.0, 0.5, 0.0]
rotate = [["z", 90.0]]
""")
    return top


def test_growth_of_placed_rows_follows_the_parents_table(tmp_path):
    # Expected fractions: the parent's [growth] table (here "estimated" = 0.3 and the default "layout"
    # 0.15 of core.control.growth's defaults, from memory); an explicit growth is kept as written.
    top = _pod_tree(tmp_path, POD, "[growth]\nestimated = 0.3\n")
    led = open_ledger(top).ledger
    assert growth_fractions(led).tolist() == [0.15, 0.3, 0.125, 0.0, 0.0]
    same = open_ledger(_pod_tree(tmp_path / "same", POD, "[growth]\nestimated = 0.4\n")).ledger
    assert growth_fractions(same).tolist() == [0.15, 0.4, 0.125, 0.0, 0.0]


def test_placed_tank_table_is_moved_with_its_row(tmp_path):
    led = open_ledger(_pod_tree(tmp_path, POD)).ledger
    tables = tank_tables(led)
    assert list(tables) == [led.index["pod/tank"]]
    # z turn of 90°: (x, y, z) -> (-y, x, z), then + at (1.0, 0.5, 0.0)
    _close(tables[led.index["pod/tank"]].cg, [[1.0, 0.7, 0.0], [1.0, 0.7, 0.1]], 1e-15)


def test_a_maturity_the_parent_does_not_know_names_the_placed_item(tmp_path, capsys):
    pod = POD.replace('[growth]\nestimated = 0.4', '[growth]\nprototype = 0.2').replace(
        'maturity = "estimated"', 'maturity = "prototype"')
    code, _, err = run_main(capsys, "rollup", _pod_tree(tmp_path, pod))
    one_line_error(code, err, "vehicle.toml", "pod/motor", "maturity")


@pytest.mark.parametrize("old,new,item,field", [
    ('maturity = "estimated"', 'maturity = "someday"', "motor", "maturity"),
    ("growth = 0.125", "growth = 1.5", "arm", "growth"),
    ("[1.0, 0.2, 0.0, 0.1]]", "[0.5, 0.2, 0.0, 0.1]]", "tank", "cg_table"),
    ('kind = "sigma"', 'kind = "maybe"', "cable", "tolerance"),
    ("mass = 0.5", 'mass = "half"', "cable", "mass"),
])
def test_bad_value_inside_a_placed_file_names_file_item_and_field(tmp_path, capsys, old, new, item, field):
    assert old in POD
    code, _, err = run_main(capsys, "rollup", _pod_tree(tmp_path, POD.replace(old, new)))
    one_line_error(code, err, "pods/pod.toml", item, field)
