"""A ledger that places other files, written to another folder or merged from a CSV kept elsewhere.

An [[assembly]] names its file relative to the ledger's folder (docs/assemblies.md): written to
another folder the same text would place another file or none, so every writer refuses it with
one line and writes nothing; written in its own folder it reads back the same. An export of a
parent lists its placed items too: merged back (`import --into`) they are unchanged rows, and a
changed one is refused (only the assembly's own file can change it). Checks: the files' bytes,
the standard library's csv and tomllib.
"""

from __future__ import annotations

import csv
import shutil
import tomllib
from pathlib import Path

import pytest

from support.cli import one_line_error, run_main
from support.paths import FIXTURES

from steelyard.core.errors import SteelyardError
from steelyard.io.ledger.file import open_ledger, save_ledger

QUAD = FIXTURES / "quad-freighter"
TOP = "quad-freighter.toml"


@pytest.fixture
def tree(tmp_path) -> Path:
    """The quad-freighter tree copied into tmp/q (the parent at its top), and an empty tmp/out."""
    shutil.copytree(QUAD, tmp_path / "q")
    (tmp_path / "out").mkdir()
    return tmp_path


def test_convert_units_to_another_folder_is_refused_and_writes_nothing(tree, capsys):
    code, _, err = run_main(capsys, "convert-units", str(tree / "q" / TOP), "--mass", "kg", "--length", "m",
                            "-o", str(tree / "out" / "si.toml"))
    one_line_error(code, err, "si.toml", "assembly 'pod-fr'", "file", "same folder")
    assert not (tree / "out" / "si.toml").exists()


def test_convert_units_in_its_own_folder_places_the_same_files(tree, capsys):
    target = tree / "q" / "si.toml"
    code, _, err = run_main(capsys, "convert-units", str(tree / "q" / TOP), "--mass", "kg", "--length", "m",
                            "-o", str(target))
    assert code == 0, err
    written = tomllib.loads(target.read_text())["assembly"]
    source = tomllib.loads((tree / "q" / TOP).read_text())["assembly"]
    assert [a["file"] for a in written] == [a["file"] for a in source]
    code, _, err = run_main(capsys, "rollup", str(target))
    assert code == 0, err  # every placed file found from there


def test_the_editors_save_to_another_folder_is_refused(tree):
    loaded = open_ledger(tree / "q" / TOP)
    with pytest.raises(SteelyardError) as caught:
        save_ledger(tree / "out" / TOP, loaded.ledger, loaded=loaded)
    assert caught.value.subject == "assembly 'pod-fr'" and caught.value.field == "file"
    assert not (tree / "out" / TOP).exists()
    save_ledger(tree / "q" / "copy.toml", loaded.ledger, loaded=loaded)  # the same folder: written
    assert (tree / "q" / "copy.toml").read_bytes() == (tree / "q" / TOP).read_bytes()


def _export(tree, capsys) -> Path:
    out = tree / "parent.csv"  # beside the tree, not in the parent's folder
    code, _, err = run_main(capsys, "export", str(tree / "q" / TOP), "--csv", str(out))
    assert code == 0, err
    return out


def test_a_parents_own_export_merges_back_in_place_from_another_folder(tree, capsys):
    sheet = _export(tree, capsys)
    parent = tree / "q" / TOP
    before = parent.read_bytes()
    code, out, err = run_main(capsys, "import", str(sheet), "--into", str(parent), "-o", str(parent))
    assert code == 0, err
    rows = list(csv.DictReader(sheet.open(newline="")))
    assert any("/" in r["id"] for r in rows)  # placed items are listed (their ids carry the placement)
    assert f"({0} changed, {0} added, {len(rows)} unchanged)" in out
    assert parent.read_bytes() == before  # nothing to change: the file as it was


def test_a_changed_placed_row_is_refused_naming_its_assembly(tree, capsys):
    sheet = _export(tree, capsys)
    rows = list(csv.DictReader(sheet.open(newline="")))
    mass = next(k for k in rows[0] if k.startswith("mass"))
    k = next(i for i, r in enumerate(rows) if r["id"] == "pod-fr/motor")
    rows[k][mass] = str(float(rows[k][mass]) + 0.04)
    with sheet.open("w", newline="") as f:
        w = csv.DictWriter(f, fieldnames=list(rows[0]))
        w.writeheader()
        w.writerows(rows)
    parent = tree / "q" / TOP
    before = parent.read_bytes()
    code, _, err = run_main(capsys, "import", str(sheet), "--into", str(parent), "-o", str(parent))
    one_line_error(code, err, "parent.csv", f"line {k + 2}", "pod-fr/motor", "assembly 'pod-fr'", "own file")
    assert parent.read_bytes() == before


def test_import_into_a_parent_written_to_another_folder_is_refused(tree, capsys):
    sheet = _export(tree, capsys)
    code, _, err = run_main(capsys, "import", str(sheet), "--into", str(tree / "q" / TOP),
                            "-o", str(tree / "out" / TOP))
    one_line_error(code, err, "assembly 'pod-fr'", "same folder")
    assert not (tree / "out" / TOP).exists()
