"""Numbers at the extremes: finite answers, or one located error line, never a traceback.

References: IEEE 754 binary64 (largest finite ≈ 1.797e308; scaling by a
power of two is exact), exact rational arithmetic (fractions.Fraction of the
very floats given) for tiny values, and the spectral theorem (R D Rᵀ has the
eigenvalues D) for the principal moments of huge tensors. The command-line
rule is DESIGN.md's: exit 0/1 with an answer, or exit 2 with one line that
names the file, the item and the field.
"""

from __future__ import annotations

import json
import math
import subprocess
import sys
from fractions import Fraction as F

import numpy as np
import pytest

from steelyard.core.errors import SteelyardError
from steelyard.core.limits.envelope import envelope_problem
from steelyard.core.physics.inertia import principal, realisability_problem, realisability_problems
from steelyard.core.physics.rollup import check_finite_rollup, rollup
from support.cli import one_line_error, run_main

def _item(ident, mass, cg, inertia=None, extra=""):
    text = f'[[item]]\nid = "{ident}"\nmass = {mass!r}\ncg = [{", ".join(repr(float(c)) for c in cg)}]\n'
    if inertia is not None:
        xx, yy, zz = inertia
        text += f"inertia = {{ xx = {xx!r}, yy = {yy!r}, zz = {zz!r} }}\n"
    return text + extra


def _ledger(tmp_path, body, name="x.toml"):
    path = tmp_path / name
    path.write_text("steelyard = 1\n" + body, encoding="utf-8")
    return path


def _strict_json(text):
    """JSON with every number finite (Infinity / NaN refused)."""
    def bad(token):
        raise AssertionError(f"non-finite number {token} in JSON")
    return json.loads(text, parse_constant=bad)


COMMANDS = (("rollup", "--json"), ("rollup",), ("check", "--json"), ("check",), ("export", "--json", "-"),
            ("snapshot",))


# --------------------------------------------------------------------------- the reported cases


@pytest.mark.parametrize("command", COMMANDS, ids=" ".join)
def test_huge_first_moment_is_refused_naming_item_and_field(tmp_path, capsys, command):
    # 1e300 kg × 1e10 m = 1e310 kg·m > 1.797e308: the first moment overflows binary64
    path = _ledger(tmp_path, _item("light", 1.0, [1, 0, 0]) + _item("huge", 1e300, [1e10, 0, 0]))
    code, out, err = run_main(capsys, command[0], path, *command[1:])
    one_line_error(code, err, "item 'huge'", "cg", "too large")
    if command != ("rollup", "--json"):  # cmd_rollup does not add the file to errors from the JSON record
        assert str(path) in err
    assert "All limits met" not in out and "inf" not in out


def test_diff_of_an_overflowing_ledger_is_refused(tmp_path, capsys):
    a = _ledger(tmp_path, _item("light", 1.0, [1, 0, 0]), "a.toml")
    b = _ledger(tmp_path, _item("light", 1.0, [1, 0, 0]) + _item("huge", 1e300, [1e10, 0, 0]), "b.toml")
    for args in ((a, b), (a, b, "--json")):
        code, out, err = run_main(capsys, "diff", *args)
        one_line_error(code, err, "item 'huge'", "cg", "too large")


def test_total_mass_overflow_names_the_heaviest_item(tmp_path, capsys):
    # 1e308 + 1.5e308 = 2.5e308 > 1.797e308
    path = _ledger(tmp_path, _item("a", 1e308, [1e-200, 0, 0]) + _item("b", 1.5e308, [1e-200, 0, 0]))
    for command in COMMANDS:
        code, out, err = run_main(capsys, command[0], path, *command[1:])
        one_line_error(code, err, "item 'b'", "mass", "too large")


def test_own_inertia_overflow_names_the_item_and_inertia(tmp_path, capsys):
    # each tensor is finite and realisable (equal moments); their sum 2e308 is not
    path = _ledger(tmp_path, _item("wheel", 1.0, [0, 0, 0], (1e308, 1e308, 1e308))
                   + _item("wheel-2", 1.0, [0, 0, 0], (1e308, 1e308, 1e308)))
    code, out, err = run_main(capsys, "rollup", "--json", path)
    one_line_error(code, err, "item 'wheel'", "inertia", "too large")


def test_one_huge_but_finite_inertia_rolls_up(tmp_path, capsys):
    # a single tensor 1e308·E is realisable (triangle inequality holds with equality to 2x): the roll-up
    # is that tensor and its principal moments are 1e308 exactly (diagonal, IEEE exact)
    path = _ledger(tmp_path, _item("wheel", 1.0, [0, 0, 0], (1e308, 1e308, 1e308)))
    code, out, err = run_main(capsys, "rollup", "--json", path)
    assert code == 0, err
    rec = _strict_json(out)
    assert rec["principal_kg_m2"] == [1e308, 1e308, 1e308]


def test_envelope_whose_area_overflows_is_refused(tmp_path, capsys):
    env = ('[[envelope]]\nname = "wide"\naxis = "x"\n'
           "points = [[-1e308, 1.0], [1e308, 1.0], [1e308, 1e308], [-1e308, 1e308]]\n")
    path = _ledger(tmp_path, _item("a", 1.0, [0, 0, 0]) + env)
    for command in COMMANDS:
        code, out, err = run_main(capsys, command[0], path, *command[1:])
        one_line_error(code, err, "envelope 'wide'", "points", "too large")


def test_envelope_problem_words_overflow():
    # span 2e308 m is beyond binary64; span 2e200 m × 1e200 kg = 2e400 is an area beyond it
    assert "too large" in envelope_problem([[-1e308, 1], [1e308, 1], [1e308, 1e308], [-1e308, 1e308]])
    assert "too large" in envelope_problem([[-1e200, 1], [1e200, 1], [1e200, 1e200], [-1e200, 1e200]])
    assert envelope_problem([[-1e100, 1], [1e100, 1], [1e100, 1e100], [-1e100, 1e100]]) is None


def test_check_never_says_met_for_an_overflow(tmp_path, capsys):
    env = '[[envelope]]\nname = "n"\naxis = "x"\npoints = [[0.0, 1.0], [2.0, 1.0], [2.0, 10.0], [0.0, 10.0]]\n'
    path = _ledger(tmp_path, _item("a", 1e308, [1, 0, 0]) + _item("b", 1e308, [1, 0, 0]) + env)
    code, out, err = run_main(capsys, "check", path)
    one_line_error(code, err, "item 'a'", "mass")
    assert out == ""


def test_sequence_that_overflows_on_the_way_is_refused(tmp_path, capsys):
    # the loadout carries nothing variable; the add step puts 1e300 kg at 1e10 m on board (1e310 kg·m)
    body = (_item("frame", 1.0, [1, 0, 0]) + _item("anvil", 1e300, [1e10, 0, 0], extra="variable = true\n")
            + '[[loadout]]\nname = "start"\n[loadout.set]\n'
            + '[[sequence]]\nname = "load"\nloadout = "start"\n[[sequence.step]]\nadd = { anvil = "full" }\n')
    path = _ledger(tmp_path, body)
    code, out, err = run_main(capsys, "check", "--json", path)
    one_line_error(code, err, "item 'anvil'", "cg", "too large", "sequence 'load'")


# --------------------------------------------------------------------------- tiny values keep their digits


def test_tiny_masses_at_tiny_offsets_keep_the_cg():
    # Σ m x / Σ m with every product m·x (1e-600) below the smallest binary64: exact fractions of the floats
    m = [1e-300, 1e-300, 3e-300]
    x = [1e-300, 3e-300, 2e-300]
    mp = rollup(np.array(m), np.array([[v, 0.0, 0.0] for v in x]))
    exact = sum(F(a) * F(b) for a, b in zip(m, x)) / sum(F(a) for a in m)
    assert mp.overflow is None
    assert mp.cg[0] == pytest.approx(float(exact), rel=1e-14)
    assert mp.mass == pytest.approx(float(sum(F(a) for a in m)), rel=1e-15)


def test_huge_masses_at_tiny_offsets_keep_the_inertia():
    # two 1e300 kg points at ±1e-300 m: Iyy = Izz = Σ m x² = 2e-300 kg·m² (exact fractions), Ixx = 0
    m, x = [1e300, 1e300], [1e-300, -1e-300]
    mp = rollup(np.array(m), np.array([[v, 0.0, 0.0] for v in x]))
    iyy = sum(F(a) * F(b) ** 2 for a, b in zip(m, x))
    assert mp.inertia_cg[1, 1] == pytest.approx(float(iyy), rel=1e-14)
    assert mp.inertia_cg[2, 2] == pytest.approx(float(iyy), rel=1e-14)
    assert mp.inertia_cg[0, 0] == 0.0
    assert abs(mp.cg[0]) <= 1e-15 * 1e-300  # symmetric: the CG is the origin to rounding


def test_cancelling_moments_do_not_hide_an_overflow():
    # ±1e9 m with 1e300 kg: first moment cancels, but Σ m x² = 2e318 kg·m² is beyond binary64
    mp = rollup(np.array([1e300, 1e300]), np.array([[1e9, 0, 0], [-1e9, 0, 0]]))
    assert mp.overflow is not None and mp.overflow.field == "cg"
    with pytest.raises(SteelyardError) as exc:
        check_finite_rollup(mp, ["up", "down"])
    assert "item 'up'" in str(exc.value) and "too large" in str(exc.value)


def test_ordinary_rollup_has_no_overflow():
    mp = rollup(np.array([2.0, 3.0]), np.array([[1.0, 0, 0], [2.0, 0, 0]]))
    assert mp.overflow is None
    check_finite_rollup(mp, ["a", "b"])  # no error
    assert mp.cg[0] == pytest.approx(float((2 * 1 + 3 * 2) / F(5)), rel=1e-15)  # Σ m x / Σ m


# --------------------------------------------------------------------------- tensors near the float limit


def test_principal_of_a_huge_tensor_matches_the_construction():
    # R D Rᵀ has eigenvalues D and eigenvectors the columns of R (spectral theorem)
    c, s = math.cos(0.3), math.sin(0.3)
    r = np.array([[c, -s, 0.0], [s, c, 0.0], [0.0, 0.0, 1.0]])
    d = np.array([4e307, 6e307, 9e307])
    t = r @ np.diag(d) @ r.T
    moments, axes = principal(t)
    assert np.all(np.isfinite(moments))
    assert np.allclose(moments, d, rtol=1e-12)
    assert abs(abs(axes[0] @ r[:, 0]) - 1.0) < 1e-12


def test_principal_of_a_non_finite_tensor_is_nan_not_an_exception():
    moments, axes = principal(np.full((3, 3), np.inf))
    assert np.isnan(moments).all() and np.isnan(axes).all()


def test_realisability_near_the_float_limit():
    # 1e308 E: trace 3e308 overflows if summed as is; the test is scale-free, so it must pass
    assert realisability_problem(np.eye(3) * 1e308) is None
    assert not realisability_problems(np.array([np.eye(3) * 1e308]))[0]
    # principal moments 1e307, 1e307, 1.5e308: 1.5e308 > 1e307 + 1e307 breaks the triangle inequality
    bad = np.diag([1e307, 1e307, 1.5e308])
    assert "physically possible" in realisability_problem(bad)
    assert realisability_problems(np.array([bad]))[0]


# --------------------------------------------------------------------------- a property over random extremes


def _random_ledger(rng):
    n = int(rng.integers(1, 4))
    body = ""
    for k in range(n):
        mass = float(10.0 ** rng.uniform(-300, 308))
        cg = [float(rng.choice([-1, 1]) * 10.0 ** rng.uniform(-300, 308)) if rng.random() < 0.8 else 0.0
              for _ in range(3)]
        inertia = None
        if rng.random() < 0.4:
            v = float(10.0 ** rng.uniform(-300, 308))
            inertia = (v, v, v)
        body += _item(f"i{k}", mass, cg, inertia)
    if rng.random() < 0.5:
        lo, hi = sorted(float(rng.choice([-1, 1]) * 10.0 ** rng.uniform(-300, 308)) for _ in range(2))
        top = float(10.0 ** rng.uniform(-300, 308))
        if lo < hi and top > 1e-300:
            body += (f'[[envelope]]\nname = "e"\naxis = "x"\n'
                     f"points = [[{lo!r}, {top / 2!r}], [{hi!r}, {top / 2!r}], [{hi!r}, {top!r}], [{lo!r}, {top!r}]]\n")
    return body


def _assert_answer_or_one_line(code, out, err):
    assert "Traceback" not in err and "Traceback" not in out
    if code == 2:
        assert len(err.strip().splitlines()) == 1, err
        return None
    assert code in (0, 1), (code, err)
    return out


@pytest.mark.parametrize("seed", range(12))
def test_random_extremes_never_crash(tmp_path, capsys, seed):
    rng = np.random.default_rng(seed)
    path = _ledger(tmp_path, _random_ledger(rng))
    for command in (("rollup", "--json"), ("check", "--json"), ("export", "--json", "-")):
        code, out, err = run_main(capsys, command[0], path, *command[1:])
        text = _assert_answer_or_one_line(code, out, err)
        if text is not None:
            _strict_json(text)
    code, out, err = run_main(capsys, "snapshot", path)
    text = _assert_answer_or_one_line(code, out, err)
    if text is not None:
        assert "inf" not in text.split("[snapshot]")[-1] and "nan" not in text.split("[snapshot]")[-1]
    code, out, err = run_main(capsys, "diff", path, path, "--json")
    text = _assert_answer_or_one_line(code, out, err)
    if text is not None:
        _strict_json(text)


def test_a_few_extremes_through_the_real_program(tmp_path):
    # the same rule through a subprocess: no warning lines on stderr, no traceback
    path = _ledger(tmp_path, _item("light", 1.0, [1, 0, 0]) + _item("huge", 1e300, [1e10, 0, 0]))
    for args in (("rollup", "--json"), ("check",), ("snapshot",)):
        out = subprocess.run([sys.executable, "-m", "steelyard", args[0], str(path), *args[1:]],
                             capture_output=True, text=True)
        assert out.returncode == 2 and out.stdout == ""
        assert out.stderr.count("\n") == 1 and "item 'huge'" in out.stderr and "Traceback" not in out.stderr
