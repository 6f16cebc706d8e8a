"""The inertia-unit rule, said where it matters.

The v1 file contract (docs/format.md, docs/contracts.md) makes kg·m² the
default inertia unit whatever the file's mass and length units. A file in
pounds and inches that gives bare inertia numbers and no inertia unit is valid
but probably means lb·in²: the two differ by 1/(0.45359237 × 0.0254²) ≈ 3,417
(NIST SP 811 exact factors), so the reader says so on stderr, once.
"""

from __future__ import annotations

from fractions import Fraction as F

from support.cli import run_cli

BASE = 'steelyard = 1\n[units]\nmass = "lb"\nlength = "in"\n{extra}[[item]]\nid = "a"\nmass = 1\ncg = [0, 0, 0]\ninertia = {{ xx = 1, yy = 1, zz = 1 }}\n'


def test_the_factor_the_note_guards_against():
    # 1 kg·m² in lb·in² (NIST SP 811: 1 lb = 0.45359237 kg, 1 in = 0.0254 m, both exact)
    assert round(1 / (F("0.45359237") * F("0.0254") ** 2)) == 3417


def test_note_on_stderr_when_the_inertia_unit_is_left_out(tmp_path):
    f = tmp_path / "n.toml"
    f.write_text(BASE.format(extra=""))
    rc, out, err = run_cli("rollup", f, "--json")
    assert rc == 0 and out.startswith("{")  # stdout stays JSON for scripts
    assert err.count("note:") == 1 and "kg*m**2" in err and str(f) in err


def test_no_note_when_the_file_says_its_inertia_unit(tmp_path):
    f = tmp_path / "n.toml"
    f.write_text(BASE.format(extra='inertia = "kg*m**2"\n'))
    rc, out, err = run_cli("rollup", f, "--json")
    assert rc == 0 and err == ""
