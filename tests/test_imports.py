"""What a quick command imports, in a fresh interpreter.

pint (with scipy behind its compat layer), rich and Textual are most of a
small command's start-up; a roll-up of a file in common units needs none of
them, and `--help` never needs Textual. The checks read `sys.modules` at the
end of the command, so a stray top-level import anywhere on the path fails here.
"""

from __future__ import annotations

import json
import re
from fractions import Fraction as F

import pytest

from support.cli import run_python
from support.units import LB

HEAVY = ("pint", "rich", "textual", "scipy")

# main() in a fresh interpreter; then, on stderr's last line, which heavy modules were loaded
# (argparse's --help leaves by SystemExit: the report is made at exit, whichever way)
_PROBE = ("import atexit, json, sys\n"
          f"atexit.register(lambda: print(json.dumps(sorted(m for m in {HEAVY!r} if m in sys.modules)), "
          "file=sys.stderr))\n"
          "from steelyard.cli.main import main\nsys.exit(main(sys.argv[1:]))")

MASSES = ["1.5", "2.25", "3", "0.125", "10", "4.5", "7.75", "0.5", "6", "12.375"]  # lb


def _tiny(tmp_path, *, first_mass: str = MASSES[0]):
    """Ten items in lb / in / lb*in**2 with bare numbers (the first mass may be a string with a unit)."""
    parts = ['steelyard = 1\n\n[units]\nmass = "lb"\nlength = "in"\ninertia = "lb*in**2"\n']
    for i, m in enumerate(MASSES):
        mass = first_mass if i == 0 else m
        parts.append(f'\n[[item]]\nid = "p{i}"\nname = "Part {i}"\ngroup = "g{i % 3}/s{i % 2}"\n'
                     f"mass = {mass}\ncg = [{10 * i}, 0, {i}]\n"
                     + ("inertia = { xx = 2, yy = 3, zz = 4 }\n" if i % 4 == 0 else ""))
    path = tmp_path / "tiny.toml"
    path.write_text("".join(parts), encoding="utf-8")
    return path


def _run(*args) -> tuple[int, str, list[str]]:
    rc, out, err = run_python(_PROBE, *args)
    return rc, out, json.loads(err.strip().splitlines()[-1])


def test_tiny_rollup_imports_no_pint_rich_textual_or_scipy(tmp_path):
    rc, out, loaded = _run("rollup", _tiny(tmp_path))
    assert rc == 0, out
    assert loaded == [], loaded
    # and it is the right roll-up: total mass by exact arithmetic over the file's numbers
    total = sum(F(m) for m in MASSES)
    # shown by the number rule (docs/numbers.md): 5 significant figures, trailing zeros dropped: 48 lb
    assert re.search(rf"│ mass \[lb\] +│ +{float(total):,.0f} │", out), out
    assert "Weight statement by group" in out and " g1 " in out


def test_tiny_rollup_json_imports_none_of_them_either(tmp_path):
    rc, out, loaded = _run("rollup", _tiny(tmp_path), "--json")
    assert rc == 0, out
    assert loaded == []
    # SI mass: the sum of the file's pounds times 0.45359237 kg/lb (NIST SP 811, exact)
    assert json.loads(out)["mass_kg"] == pytest.approx(float(sum(F(m) for m in MASSES) * LB), rel=1e-14)


def test_a_common_unit_in_a_value_needs_no_pint(tmp_path):
    rc, out, loaded = _run("rollup", _tiny(tmp_path, first_mass='"24 oz"'), "--json")
    assert rc == 0 and loaded == []
    # 24 oz = 1.5 lb (16 oz to the pound, NIST SP 811): the same total as the bare-number file
    assert json.loads(out)["mass_kg"] == pytest.approx(float(sum(F(m) for m in MASSES) * LB), rel=1e-14)


def test_a_rare_unit_still_reads_through_pint(tmp_path):
    # a grain is 64.79891 mg exactly (NIST SP 811, Appendix B): 23,148.6... grains is not a common
    # unit, so the registry is built for it, and only then
    rc, out, loaded = _run("rollup", _tiny(tmp_path, first_mass='"10500 grain"'), "--json")
    assert rc == 0, out
    assert "pint" in loaded and "textual" not in loaded and "rich" not in loaded
    expected = (sum(F(m) for m in MASSES[1:]) * LB + 10500 * F("64.79891") / 10**6)
    assert json.loads(out)["mass_kg"] == pytest.approx(float(expected), rel=1e-14)


def test_help_imports_no_textual(tmp_path):
    for args in (["--help"], ["rollup", "--help"], ["check", "--help"]):
        rc, out, loaded = _run(*args)
        assert rc == 0 and "usage: steelyard" in out
        assert "textual" not in loaded, (args, loaded)
        assert loaded == [], (args, loaded)  # nor pint, rich or scipy
