"""Placing an assembly: units, frame alignment, mirror, rotate and at, checked against outside references.

p_parent = at + R·M·A·p and I_parent = T·I·Tᵀ with T = R·M·A (the placement order of
the assemblies contract, docs/assemblies.md). Expected values come from sympy (exact
rotation matrices, exact unit factors), trimesh (mass properties of a transformed mesh)
and the symmetry of a mirrored pair; never from steelyard's own output.
"""

from __future__ import annotations

import json
from fractions import Fraction
from pathlib import Path

import numpy as np
import pytest
import sympy as sp
import trimesh

from support.units import IN, LB

from steelyard.io.ledger.file import open_ledger

CHILD_G_MM = """steelyard = 1
[units]
mass = "g"
length = "mm"
inertia = "g*mm**2"
[frame]
x = "fwd"
y = "left"
z = "up"

[[item]]
id = "block"
mass = 1500.0
cg = [120.0, -40.0, 35.0]
inertia = { xx = 9.0e6, yy = 7.0e6, zz = 5.0e6, xy = 4.0e5, xz = -3.0e5, yz = 2.0e5 }
"""


def _tree(tmp_path: Path, parent: str, files: dict[str, str]) -> Path:
    for name, text in files.items():
        p = tmp_path / name
        p.parent.mkdir(parents=True, exist_ok=True)
        p.write_text(text)
    top = tmp_path / "vehicle.toml"
    top.write_text(parent)
    return top


def _parent(assemblies: str, items: str = "", extra: str = "") -> str:
    return f"""steelyard = 1
[units]
mass = "kg"
length = "m"
inertia = "kg*m**2"
[frame]
x = "aft"
y = "right"
z = "up"
{items}
{assemblies}
{extra}
"""


def _rot(axis: str, degrees) -> sp.Matrix:
    """Active right-handed rotation about a body axis, exact (sympy's rot_axis* are the passive transposes)."""
    a = sp.rad(degrees)
    c, s = sp.cos(a), sp.sin(a)
    if axis == "x":
        return sp.Matrix([[1, 0, 0], [0, c, -s], [0, s, c]])
    if axis == "y":
        return sp.Matrix([[c, 0, s], [0, 1, 0], [-s, 0, c]])
    return sp.Matrix([[c, -s, 0], [s, c, 0], [0, 0, 1]])


def _tensor(xx, yy, zz, pxy, pxz, pyz) -> sp.Matrix:
    """Inertia tensor from moments and product integrals (off-diagonals are minus the products)."""
    return sp.Matrix([[xx, -pxy, -pxz], [-pxy, yy, -pyz], [-pxz, -pyz, zz]])


def _close(actual, expected: sp.Matrix, rel=1e-12):
    e = np.array(sp.N(expected, 30).tolist(), dtype=float)
    a = np.asarray(actual, dtype=float).reshape(e.shape)
    scale = max(np.abs(e).max(), 1e-300)
    assert np.abs(a - e).max() <= rel * scale, (a, e)


def test_one_item_placed_matches_sympy_exact_transform(tmp_path):
    # sympy: A from the frame labels (assembly x fwd, y left, z up -> parent x aft, y right, z up),
    # M negates parent y, R = Rx(-20°)·Rz(30°) (turns applied left to right), units g/mm -> kg/m exact.
    top = _tree(tmp_path, _parent('[[assembly]]\nid = "box"\nfile = "parts/box.toml"\nat = [1.5, 0.25, -0.1]\n'
                                  'mirror = "y"\nrotate = [["z", 30.0], ["x", -20.0]]\n'),
                {"parts/box.toml": CHILD_G_MM})
    led = open_ledger(top).ledger
    it = led.item("box/block")
    g, mm = sp.Rational(1, 1000), sp.Rational(1, 1000)
    a = sp.diag(-1, -1, 1)
    m = sp.diag(1, -1, 1)
    r = _rot("x", -20) * _rot("z", 30)
    t = r * m * a
    p = sp.Matrix([120, -40, 35]) * mm
    at = sp.Matrix([sp.Rational(3, 2), sp.Rational(1, 4), sp.Rational(-1, 10)])
    _close(it.cg, at + t * p)
    k = g * mm * mm
    i_child = _tensor(9_000_000 * k, 7_000_000 * k, 5_000_000 * k, 400_000 * k, -300_000 * k, 200_000 * k)
    expected = t * i_child * t.T
    xx, yy, zz, pxy, pxz, pyz = it.inertia
    _close([[xx, -pxy, -pxz], [-pxy, yy, -pyz], [-pxz, -pyz, zz]], expected)
    assert it.mass == pytest.approx(1.5, rel=1e-15)
    # the columns the roll-up uses agree with the item
    _close(led.arrays.own[led.index["box/block"]], expected)


def test_box_shape_placed_matches_trimesh_of_the_transformed_mesh(tmp_path):
    # trimesh: a box mesh built in the assembly's frame, moved by the same 4x4 (reflection included),
    # gives the reference mass properties; steelyard places a `box` shape item.
    child = """steelyard = 1
[frame]
x = "fwd"
y = "left"
z = "up"
[[item]]
id = "crate"
mass = 12.0
cg = [0.3, 0.1, -0.05]
shape = { kind = "box", size = [0.6, 0.4, 0.2] }
rotate = [["y", 15.0]]
"""
    turns = '[["z", 40.0], ["y", 10.0]]'
    top = _tree(tmp_path, _parent(f'[[assembly]]\nid = "c"\nfile = "crate.toml"\nat = [2.0, -0.5, 0.3]\n'
                                  f'mirror = "x"\nrotate = {turns}\n'), {"crate.toml": child})
    code, out, err = run_main_json(top)
    rec = json.loads(out)
    mesh = trimesh.creation.box(extents=[0.6, 0.4, 0.2])
    own = np.eye(4)
    own[:3, :3] = np.array(sp.N(_rot("y", 15), 20).tolist(), dtype=float)
    own[:3, 3] = [0.3, 0.1, -0.05]
    mesh.apply_transform(own)
    a = np.diag([-1.0, -1.0, 1.0])
    m = np.diag([-1.0, 1.0, 1.0])
    r = np.array(sp.N(_rot("y", 10) * _rot("z", 40), 20).tolist(), dtype=float)
    place = np.eye(4)
    place[:3, :3] = r @ m @ a
    place[:3, 3] = [2.0, -0.5, 0.3]
    mesh.apply_transform(place)
    if mesh.volume < 0:  # a reflection turns the faces inside out
        mesh.invert()
    mesh.density = 12.0 / mesh.volume
    assert rec["mass_kg"] == pytest.approx(12.0, rel=1e-12)
    assert np.allclose(rec["cg_m"], mesh.center_mass, rtol=0, atol=1e-12)
    assert np.allclose(rec["inertia_cg_kg_m2"], mesh.moment_inertia, rtol=0, atol=1e-9 * np.trace(mesh.moment_inertia))


def run_main_json(path):
    from steelyard.cli.main import main
    import contextlib
    import io

    buf, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(buf), contextlib.redirect_stderr(err):
        code = main(["rollup", str(path), "--json"])
    assert code == 0, err.getvalue()
    return code, buf.getvalue(), err.getvalue()


ASYMMETRIC = """steelyard = 1
[[item]]
id = "lump"
mass = 3.0
cg = [0.4, 0.15, -0.2]
inertia = { xx = 0.09, yy = 0.07, zz = 0.05, xy = 0.012, xz = -0.008, yz = 0.006 }
[[item]]
id = "rod"
mass = 1.2
cg = [-0.3, 0.05, 0.1]
shape = { kind = "rod", length = 0.9, axis = "x" }
rotate = [["z", 20.0]]
"""


def test_mirrored_pair_has_no_products_across_the_mirror_plane(tmp_path):
    # Physics (reflection symmetry, common practice): a mass distribution symmetric about the plane y = 0
    # has ∫xy dm = ∫yz dm = 0 about its CG, and its CG lies in that plane. The pair is placed as the
    # contract's mirror is meant to be used: same turn with the opposite sign, `at` reflected.
    top = _tree(tmp_path, _parent(
        '[[assembly]]\nid = "right"\nfile = "wing.toml"\nat = [1.2, 0.8, 0.05]\nrotate = [["z", 25.0], ["x", 5.0]]\n'
        '[[assembly]]\nid = "left"\nfile = "wing.toml"\nat = [1.2, -0.8, 0.05]\nmirror = "y"\n'
        'rotate = [["z", -25.0], ["x", -5.0]]\n'), {"wing.toml": ASYMMETRIC})
    _, out, _ = run_main_json(top)
    rec = json.loads(out)
    i = np.array(rec["inertia_cg_kg_m2"])
    scale = np.trace(i)
    assert abs(rec["cg_m"][1]) <= 1e-15
    assert abs(i[0, 1]) <= 1e-14 * scale and abs(i[1, 2]) <= 1e-14 * scale
    assert abs(i[0, 2]) > 1e-4 * scale  # ∫xz dm is not forced to zero: the check is not vacuous
    # each side alone does have products across the plane
    one = np.array(json.loads(run_main_json(_tree(tmp_path / "one", _parent(
        '[[assembly]]\nid = "right"\nfile = "wing.toml"\nat = [1.2, 0.8, 0.05]\nrotate = [["z", 25.0], ["x", 5.0]]\n'),
        {"wing.toml": ASYMMETRIC}))[1])["inertia_cg_kg_m2"])
    assert abs(one[0, 1]) > 1e-4 * np.trace(one)


def test_nested_assemblies_compose_placements_and_ids(tmp_path):
    # Exact composition of two placements with quarter turns (sympy integers): a pod inside a wing inside
    # the vehicle lands at at_w + T_w·(at_p + T_p·p).
    pod = '''steelyard = 1
[[item]]
id = "motor"
mass = 2.0
cg = [0.1, 0.0, 0.05]
'''
    wing = '''steelyard = 1
[[item]]
id = "spar"
mass = 5.0
cg = [0.0, 1.0, 0.0]
[[assembly]]
id = "pod-a"
file = "pod.toml"
at = [0.2, 1.5, 0.0]
rotate = [["z", 90.0]]
'''
    top = _tree(tmp_path, _parent('[[assembly]]\nid = "wing-l"\nfile = "parts/wing.toml"\nat = [3.0, -0.5, 0.4]\n'
                                  'mirror = "y"\nrotate = [["x", 90.0]]\n'),
                {"parts/wing.toml": wing, "parts/pod.toml": pod})
    led = open_ledger(top).ledger
    assert [it.id for it in led.items] == ["wing-l/spar", "wing-l/pod-a/motor"]
    assert [(p.id, p.depth) for p in led.placed] == [("wing-l", 1), ("wing-l/pod-a", 2)]
    tp = _rot("z", 90)
    tw = _rot("x", 90) * sp.diag(1, -1, 1)
    at_w = sp.Matrix([3, sp.Rational(-1, 2), sp.Rational(2, 5)])
    p_motor = sp.Matrix([sp.Rational(1, 10), 0, sp.Rational(1, 20)])
    expected = at_w + tw * (sp.Matrix([sp.Rational(1, 5), sp.Rational(3, 2), 0]) + tp * p_motor)
    _close(led.item("wing-l/pod-a/motor").cg, expected, rel=1e-15)
    assert led.item("wing-l/pod-a/motor").group == "wing-l/pod-a"
    assert led.item("wing-l/pod-a/motor").source == "wing-l/pod-a"


def test_units_of_the_assembly_are_converted_exactly(tmp_path):
    # NIST SP 811 Appendix B: 1 lb = 0.45359237 kg, 1 in = 0.0254 m, both exact.
    child = '''steelyard = 1
[units]
mass = "lb"
length = "in"
[[item]]
id = "box"
mass = 7.25
cg = [12.5, -3.0, 4.0]
quantity = 2
'''
    top = _tree(tmp_path, _parent('[[assembly]]\nid = "bay"\nfile = "bay.toml"\nat = [0.5, 0.0, 0.0]\n'),
                {"bay.toml": child})
    _, out, _ = run_main_json(top)
    rec = json.loads(out)
    mass = 2 * Fraction("7.25") * LB
    assert rec["mass_kg"] == pytest.approx(float(mass), rel=1e-15)
    x = Fraction("0.5") + Fraction("12.5") * IN
    assert rec["cg_m"][0] == pytest.approx(float(x), rel=1e-15)
    assert rec["assemblies"] == [{"id": "bay", "file": "bay.toml", "mass_kg": pytest.approx(float(mass), rel=1e-15),
                                  "cg_m": [pytest.approx(float(x), rel=1e-15),
                                           pytest.approx(float(-3 * IN), rel=1e-15),
                                           pytest.approx(float(4 * IN), rel=1e-15)]}]


def test_parent_loadout_sets_a_variable_item_inside_an_assembly(tmp_path):
    # exact arithmetic: half of a 40 kg tank at x = 2 + 0.5 (the pod's datum at x = 2), beside 10 kg at x = 1
    pod = '''steelyard = 1
[[item]]
id = "tank"
mass = 40.0
cg = [0.5, 0.0, 0.0]
variable = true
'''
    top = _tree(tmp_path, _parent('[[assembly]]\nid = "pod"\nfile = "pod.toml"\nat = [2.0, 0.0, 0.0]\n',
                                  items='[[item]]\nid = "frame"\nmass = 10.0\ncg = [1.0, 0.0, 0.0]\n',
                                  extra='[[loadout]]\nname = "half"\n[loadout.set]\n"pod/tank" = 0.5\n'),
                {"pod.toml": pod})
    from steelyard.cli.main import main
    import contextlib
    import io

    buf = io.StringIO()
    with contextlib.redirect_stdout(buf):
        assert main(["rollup", str(top), "--json", "--loadout", "half"]) == 0
    rec = json.loads(buf.getvalue())
    assert rec["mass_kg"] == pytest.approx(30.0, rel=1e-15)
    assert rec["cg_m"][0] == pytest.approx(float((10 * 1 + 20 * Fraction(5, 2)) / 30), rel=1e-15)
    assert rec["assemblies"][0]["mass_kg"] == pytest.approx(20.0, rel=1e-15)
