"""The `steelyard` command: exit codes, one-line errors, the rollup --json contract.

Expected numbers are recomputed here from the file text with tomllib and
exact fractions (CG = Σ moment / Σ weight, FAA-H-8083-1), with the NIST SP 811
exact factors 1 lb = 0.45359237 kg and 1 in = 0.0254 m.
"""

import hashlib
import json
import tomllib
from fractions import Fraction as F
from pathlib import Path

import pytest

from support.cli import process_one_line_error, run_process
from support.paths import ROOT
from support.units import IN, LB

BAD = ROOT / "fixtures" / "bad"
EXACT = {"kg": F(1), "g": F(1, 1000), "lb": LB, "m": F(1), "mm": F(1, 1000), "cm": F(1, 100), "in": IN,
         "ft": 12 * IN}  # NIST SP 811 exact definitions


def exact_value(v, file_factor):
    """A bare number in file units, or "<number> <unit>" with a unit from EXACT (else None)."""
    if isinstance(v, str):
        number, unit = v.split()
        return F(number) * EXACT[unit] if unit in EXACT else None
    return F(v) * file_factor

# (file, subject text the message must name, field text) — see fixtures/bad/README.md
CASES = [
    ("not-toml.toml", None, "line 3"),
    ("empty.toml", None, "empty"),
    ("no-version.toml", None, "steelyard"),
    ("future-version.toml", None, "steelyard"),
    ("negative-mass.toml", "item 'tail-bumper'", "mass"),
    ("nan-mass.toml", "item 'pitot-mast'", "mass"),
    ("inf-mass.toml", "item 'antenna-base'", "mass"),
    ("bool-mass.toml", "item 'cabin-heater'", "mass"),
    ("wrong-dimension.toml", "item 'seat-cushion'", "mass"),
    ("unknown-unit.toml", "item 'tow-hook'", "mass"),
    ("cg-length.toml", "item 'oil-cooler'", "cg"),
    ("duplicate-id.toml", "item 'fuel-pump'", "id"),
    ("inertia-and-shape.toml", "item 'ballast-plate'", "inertia"),
    ("unknown-shape.toml", "item 'radome'", "shape.kind"),
    ("tube-inner-above-outer.toml", "item 'spar-tube'", "shape.inner_radius"),
    ("quantity-zero.toml", "item 'rivets'", "quantity"),
    ("loadout-unknown-item.toml", "loadout 'ferry'", "set.ghost-tank"),
    ("fraction-out-of-range.toml", "loadout 'overfill'", "set.fuel-main"),
    ("envelope-two-points.toml", "envelope 'narrow'", "points"),
    ("overflow.toml", "item 'ingot'", "mass"),
    ("impossible-inertia.toml", "item 'flywheel'", "inertia"),
    ("binary.toml", None, "not a text file"),
]


def digest(p: Path) -> str:
    return hashlib.sha256(p.read_bytes()).hexdigest()


@pytest.mark.parametrize("name,subject,field", CASES, ids=[c[0] for c in CASES])
def test_bad_input_exit_2_one_line_file_unchanged(name, subject, field):
    path = BAD / name
    before = digest(path)
    out = run_process("rollup", path, "--json")
    assert out.stdout == ""
    process_one_line_error(out, str(path), *(p for p in (subject, field) if p))
    assert digest(path) == before


def test_missing_file_and_directory(tmp_path):
    process_one_line_error(run_process("rollup", tmp_path / "nope.toml"), "nope.toml", "no such file")
    process_one_line_error(run_process("rollup", tmp_path), str(tmp_path), "directory")


def test_unknown_loadout_option():
    demo = ROOT / "fixtures" / "trainer.toml"
    process_one_line_error(run_process("rollup", demo, "--loadout", "no-such"), "--loadout", "no-such")


def test_usage_error_is_one_line():
    process_one_line_error(run_process("rollup"), "steelyard")
    process_one_line_error(run_process("rollup", "x.toml", "--units", "furlongs"), "--units")


def exact_totals(path: Path, loadout: str | None):
    """Independent roll-up of mass and CG from the file text (tomllib + fractions)."""
    data = tomllib.loads(path.read_text())
    units = data.get("units", {})
    mf = {"lb": LB, "kg": F(1)}[units.get("mass", "kg")]
    lf = {"in": IN, "m": F(1)}[units.get("length", "m")]
    sets = {}
    if loadout:
        chain = []
        name = loadout
        while name:
            lo = next(l for l in data["loadout"] if l["name"] == name)
            chain.append(lo)
            name = lo.get("base")
        for lo in reversed(chain):
            sets.update(lo.get("set", {}))
    total = F(0)
    moment = [F(0)] * 3
    for it in data["item"]:
        m = exact_value(it["mass"], mf) * it.get("quantity", 1)
        if it.get("variable"):
            amount = sets.get(it["id"], 0)
            if isinstance(amount, str):
                amount = exact_value(amount, None)
                if amount is None:
                    return None  # a volume: needs the density, not this oracle's job
                m = amount
            else:
                m = m * F(amount)
        total += m
        moment = [moment[k] + m * exact_value(it["cg"][k], lf) for k in range(3)]
    return total, [mk / total for mk in moment]


@pytest.mark.parametrize("fixture", ["trainer.toml", "cargo-drone.toml"])
def test_rollup_json_contract_si(fixture):
    path = ROOT / "fixtures" / fixture
    data = tomllib.loads(path.read_text())
    names = [None] + [lo["name"] for lo in data.get("loadout", [])]
    checked = 0
    for name in names:
        args = ["rollup", path, "--json"] + (["--loadout", name] if name else [])
        out = run_process(*args)
        assert out.returncode == 0, out.stderr
        rec = json.loads(out.stdout)
        # DESIGN.md contract v1: these keys with these meanings; added keys are allowed
        assert {"loadout", "mass_kg", "cg_m", "inertia_cg_kg_m2", "principal_kg_m2",
                "principal_axes", "envelopes"} <= set(rec)
        assert rec["loadout"] == name
        assert len(rec["inertia_cg_kg_m2"]) == 3 and len(rec["principal_axes"]) == 3
        assert rec["principal_kg_m2"] == sorted(rec["principal_kg_m2"])
        for env in rec["envelopes"]:
            assert {"name", "axis", "inside", "limits_m", "margin_m"} <= set(env)
            if env["limits_m"] is not None:  # margin: distance to the nearer of lo, hi (contract)
                lo, hi = env["limits_m"]
                c = rec["cg_m"]["xyz".index(env["axis"])]
                assert env["margin_m"] == pytest.approx(min(c - lo, hi - c), abs=1e-12)
                assert env["inside"] == (env["margin_m"] >= 0)
        exact = exact_totals(path, name)
        if exact is None:
            continue
        total, cg = exact
        assert rec["mass_kg"] == pytest.approx(float(total), rel=1e-13)
        assert rec["cg_m"] == pytest.approx([float(c) for c in cg], rel=1e-12, abs=1e-12)
        checked += 1
    assert checked >= 1


def test_human_rollup_names_units_and_axes():
    out = run_process("rollup", ROOT / "fixtures" / "trainer.toml", "--units", "si")
    assert out.returncode == 0, out.stderr
    assert "mass [kg]" in out.stdout and "(+aft)" in out.stdout and "kg·m²" in out.stdout


def test_no_argument_without_terminal_rolls_up_the_demo():
    out = run_process()
    assert out.returncode == 0, out.stderr
    assert "Roll-up of" in out.stdout and "demo.toml" in out.stdout
