"""`steelyard convert-units`: a file's own units change, its values do not (docs/numbers.md)."""

from __future__ import annotations

import json
import math
import shutil
import tomllib

import pytest

from support.cli import one_line_error, run_cli
from support.paths import FIXTURES

LEDGERS = ["trainer.toml", "cargo-drone.toml", "weighing-example.toml", "trainer-overweight.toml"]


def _rollup(path, *extra) -> dict:
    code, out, err = run_cli("rollup", path, "--json", *extra)
    assert code == 0, err
    record = json.loads(out)
    record.pop("file", None)
    return record


def _close(a, b, path="") -> None:
    """Every number of two JSON records within 1e-12 relative (the task's bound; common practice
    for a change that must not alter a value beyond float rounding)."""
    if isinstance(a, dict):
        assert a.keys() == b.keys(), path
        for k in a:
            _close(a[k], b[k], f"{path}.{k}")
    elif isinstance(a, list):
        assert len(a) == len(b), path
        for k, (x, y) in enumerate(zip(a, b)):
            _close(x, y, f"{path}[{k}]")
    elif isinstance(a, float) or isinstance(b, float):
        assert math.isclose(a, b, rel_tol=1e-12, abs_tol=1e-12), (path, a, b)
    else:
        assert a == b, path


def _numbers(data, path=""):
    """Every number in a parsed TOML document with where it is, in file order."""
    if isinstance(data, dict):
        for k, v in data.items():
            yield from _numbers(v, f"{path}.{k}")
    elif isinstance(data, list):
        for k, v in enumerate(data):
            yield from _numbers(v, f"{path}[{k}]")
    elif type(data) in (int, float):
        yield path, data


@pytest.mark.parametrize("name", LEDGERS)
def test_convert_keeps_every_value_and_converts_back(tmp_path, name):
    src = FIXTURES / name
    path = tmp_path / name
    shutil.copy(src, path)
    before = _rollup(path)
    code, out, err = run_cli("convert-units", path, "--mass", "g", "--length", "mm", "--inertia", "g*mm**2")
    assert code == 0, err
    units = tomllib.loads(path.read_text(encoding="utf-8"))["units"]
    assert (units["mass"], units["length"], units["inertia"]) == ("g", "mm", "g*mm**2")
    _close(before, _rollup(path))
    code, _, err = run_cli("check", path, "--json")
    code0, out0, _ = run_cli("check", src, "--json")
    assert code == code0
    # back to the original units: the original numbers again, to the digits printed in the file
    orig = tomllib.loads(src.read_text(encoding="utf-8"))["units"]
    code, _, err = run_cli("convert-units", path, "--mass", orig.get("mass", "kg"),
                           "--length", orig.get("length", "m"), "--inertia", orig.get("inertia", "kg*m**2"))
    assert code == 0, err
    want = dict(_numbers(tomllib.loads(src.read_text(encoding="utf-8"))))
    got = dict(_numbers(tomllib.loads(path.read_text(encoding="utf-8"))))
    for where, value in want.items():
        if where.startswith(".change") or where.startswith(".snapshot"):
            continue
        assert where in got, where
        assert repr(float(got[where])) == repr(float(value)), (where, value, got[where])


def test_kept_tables_are_converted(tmp_path):
    # [[limit]] max_mass is a bare number in file units (docs/limits.md): 22 kg = 22000 g exactly
    path = tmp_path / "drone.toml"
    shutil.copy(FIXTURES / "cargo-drone.toml", path)
    limits = [t for t in tomllib.loads(path.read_text())["limit"] if "max_mass" in t]
    code, _, err = run_cli("convert-units", path, "--mass", "g")
    assert code == 0, err
    after = [t for t in tomllib.loads(path.read_text())["limit"] if "max_mass" in t]
    for a, b in zip(limits, after):
        if type(a["max_mass"]) in (int, float):
            assert b["max_mass"] == a["max_mass"] * 1000


def test_output_elsewhere_leaves_the_source_alone(tmp_path):
    src = tmp_path / "t.toml"
    shutil.copy(FIXTURES / "trainer.toml", src)
    data = src.read_bytes()
    out = tmp_path / "metric.toml"
    code, _, err = run_cli("convert-units", src, "--mass", "kg", "-o", out)
    assert code == 0, err
    assert src.read_bytes() == data
    assert tomllib.loads(out.read_text())["units"]["mass"] == "kg"
    _close(_rollup(src, "--loadout", "takeoff"), _rollup(out, "--loadout", "takeoff"))


def test_output_elsewhere_keeps_the_files_comments_as_in_place(tmp_path):
    # the comments are what people wrote in the source: a converted copy keeps them, byte for byte as the
    # same conversion in place writes (the source's own lines are the reference)
    src, inplace = tmp_path / "t.toml", tmp_path / "in-place.toml"
    shutil.copy(FIXTURES / "trainer.toml", src)
    shutil.copy(FIXTURES / "trainer.toml", inplace)
    out = tmp_path / "metric.toml"
    assert run_cli("convert-units", src, "--mass", "kg", "--length", "m", "-o", out)[0] == 0
    assert run_cli("convert-units", inplace, "--mass", "kg", "--length", "m")[0] == 0
    comments = [line for line in src.read_text().splitlines() if line.lstrip().startswith("#")]
    assert len(comments) > 10
    written = out.read_text().splitlines()
    assert all(c in written for c in comments)
    assert out.read_bytes() == inplace.read_bytes()


@pytest.mark.parametrize("args, field", [(("--mass", "stone-ish"), "--mass"), (("--length", "kg"), "--length"),
                                         ((), "--mass")])
def test_bad_units_are_one_line_and_exit_2(tmp_path, args, field):
    path = tmp_path / "t.toml"
    shutil.copy(FIXTURES / "trainer.toml", path)
    data = path.read_bytes()
    code, _, err = run_cli("convert-units", path, *args)
    one_line_error(code, err, field)
    assert path.read_bytes() == data


def test_converting_there_and_back_gives_the_files_own_bytes(tmp_path):
    # every number comes back digit for digit and nothing the file wrote is dropped, not even a key
    # that says the default (trainer.toml writes `axis = "z"` on its rods); the source bytes are the reference
    src = tmp_path / "t.toml"
    shutil.copy(FIXTURES / "trainer.toml", src)
    assert 'axis = "z"' in src.read_text()
    metric, back = tmp_path / "si.toml", tmp_path / "back.toml"
    assert run_cli("convert-units", src, "--mass", "kg", "--length", "m", "--inertia", "kg*m**2", "-o", metric)[0] == 0
    assert run_cli("convert-units", metric, "--mass", "lb", "--length", "in", "--inertia", "lb*in**2",
                   "-o", back)[0] == 0
    assert back.read_bytes() == src.read_bytes()
