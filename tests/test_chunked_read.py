"""A ledger read piece by piece means exactly what the whole-file reading means.

References: the standard library's tomllib reading of the same text (what a
file means, and whether it is refused), and the item-by-item reader with the
whole-file parse (io.ledger.read.ledger_from_data(parse_toml(text))), which
the piece-by-piece path must match in every ledger, every roll-up and every
error message. Pieces are forced small, so a file is cut at every [[item]].
"""

from __future__ import annotations

import importlib.util
import pickle
import tomllib
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

from steelyard.core.document.model import NO_UNITS, Item, items_from_columns
from steelyard.core.errors import SteelyardError
from steelyard.io.ledger import read_items_fast, toml_chunks
from steelyard.io.ledger.read import ledger_from_data
from steelyard.io.ledger.read_stream import ledger_from_text
from steelyard.io.ledger.toml_read import decode, parse_toml
from support.cli import run_main
from support.paths import FIXTURES

_spec = importlib.util.spec_from_file_location("_make_ledger", Path(__file__).parent / "perf" / "make_ledger.py")
make_ledger = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(make_ledger)

GOOD = sorted(p for p in FIXTURES.rglob("*.toml") if "bad" not in p.parts)
BAD = sorted((FIXTURES / "bad").glob("*.toml"))


def _whole(text: str, source: str):
    """The reference reading: whole-file parse, items one by one."""
    saved = read_items_fast.read_fast
    read_items_fast.read_fast = lambda reader: None
    try:
        return ledger_from_data(parse_toml(text, source=source), source=source)
    finally:
        read_items_fast.read_fast = saved


def _outcome(read):
    try:
        return "ok", read()
    except SteelyardError as exc:
        return "error", str(exc)


def _same_ledger(a, b) -> None:
    assert replace(a, placed=()) == replace(b, placed=())
    assert repr(a.placed) == repr(b.placed)  # placements hold numpy arrays: compared as written out
    for col in ("unit_mass", "quantity", "cg", "own", "variable"):
        assert np.array_equal(getattr(a.arrays, col), getattr(b.arrays, col)), col
    assert a.index == b.index


@pytest.mark.parametrize("path", GOOD, ids=lambda p: str(p.relative_to(FIXTURES)))
def test_fixture_reads_the_same_in_pieces(path):
    text = path.read_text(encoding="utf-8")
    assert toml_chunks.cuts(text, 1) is not None  # every fixture has items: it is really cut
    _same_ledger(ledger_from_text(text, source=str(path), chunk_chars=1), _whole(text, str(path)))
    for fast in (True, False):  # the pieces' parse is the whole parse (reference: tomllib)
        assert toml_chunks.parse_chunked(text, source=str(path), fast=fast, size=1) == tomllib.loads(text)


@pytest.mark.parametrize("path", BAD, ids=lambda p: p.name)
def test_bad_fixture_refused_in_the_same_words(path):
    data = path.read_bytes()
    got = _outcome(lambda: ledger_from_text(decode(data, source=str(path)), source=str(path), chunk_chars=1))
    want = _outcome(lambda: _whole(decode(data, source=str(path)), str(path)))
    assert got[0] == want[0]
    if got[0] == "error":
        assert got[1] == want[1]
    else:
        _same_ledger(got[1], want[1])


@pytest.mark.parametrize("command", ["rollup", "check"])
@pytest.mark.parametrize("path", GOOD, ids=lambda p: str(p.relative_to(FIXTURES)))
def test_cli_json_same_in_pieces(capsys, monkeypatch, path, command):
    monkeypatch.setattr(toml_chunks, "CHUNK_CHARS", 1)
    cut = run_main(capsys, command, "--json", path)
    monkeypatch.setattr(toml_chunks, "CHUNK_CHARS", 1 << 40)
    monkeypatch.setattr(read_items_fast, "read_fast", lambda reader: None)
    whole = run_main(capsys, command, "--json", path)
    assert cut == whole
    assert cut[1].strip().startswith(("{", "["))


@pytest.mark.parametrize("n,seed", [(400, 1), (1500, 2)])
def test_generated_ledger_same_in_pieces(tmp_path, capsys, monkeypatch, n, seed):
    path = tmp_path / "gen.toml"
    make_ledger.write_ledger(path, n, seed=seed)
    text = path.read_text(encoding="utf-8")
    assert len(toml_chunks.cuts(text, 4096)) > 10
    _same_ledger(ledger_from_text(text, source=str(path), chunk_chars=4096), _whole(text, str(path)))
    assert toml_chunks.parse_chunked(text, source="x", size=4096) == tomllib.loads(text)
    monkeypatch.setattr(toml_chunks, "CHUNK_CHARS", 4096)
    cut = run_main(capsys, "rollup", "--json", path)
    monkeypatch.setattr(toml_chunks, "CHUNK_CHARS", 1 << 40)
    monkeypatch.setattr(read_items_fast, "read_fast", lambda reader: None)
    assert cut == run_main(capsys, "rollup", "--json", path)


def test_a_generated_snapshot_same_in_pieces(tmp_path, capsys):
    # a snapshot marks each load item with `loaded = { capacity_kg, fill }`: those rows are set in bulk
    path, snap = tmp_path / "gen.toml", tmp_path / "snap.toml"
    make_ledger.write_ledger(path, 1500, seed=4)
    code, _, err = run_main(capsys, "snapshot", path, "--loadout", "full", "-o", snap)
    assert code == 0, err
    text = snap.read_text(encoding="utf-8")
    marked = [t for t in tomllib.loads(text)["item"] if "loaded" in t]
    assert len(marked) > 20
    got = ledger_from_text(text, source=str(snap), chunk_chars=4096)
    _same_ledger(got, _whole(text, str(snap)))
    assert [it.loaded for it in got.items if it.loaded is not None] == [t["loaded"] for t in marked]  # tomllib


HEAD = 'steelyard = 1\n[units]\nmass = "kg"\n'
ITEM = '[[item]]\nid = "{0}"\nmass = 1.0\ncg = [0, 0, 0]\n'


def _items(*ids: str) -> str:
    return "".join(ITEM.format(i) for i in ids)


# Texts whose meaning depends on what two pieces define; each is judged by tomllib reading it whole.
ACROSS = {
    "units twice": HEAD + _items("a", "b") + '[units]\nlength = "m"\n' + _items("c"),
    "units after items": 'steelyard = 1\n' + _items("a", "b") + '[units]\nmass = "lb"\n',
    "array then table": HEAD + _items("a", "b") + '[item]\nid = "c"\n',
    "inline array then tables": 'steelyard = 1\nitem = [{id = "z", mass = 1, cg = [0, 0, 0]}]\n' + _items("a", "b"),
    "user twice": HEAD + _items("a") + "[user]\nx = 1\n" + _items("b") + "[user]\ny = 2\n",
    "loadouts in two pieces": HEAD + _items("a") + '[[loadout]]\nname = "p"\n' + _items("b")
    + '[[loadout]]\nname = "q"\n',
    "sub-table of an item": HEAD + _items("a") + "[item.user]\nk = 1\n" + _items("b") + "[item.user]\nk = 2\n",
    "super-table split": HEAD + _items("a") + "[user.x]\nk = 1\n" + _items("b") + "[user.y]\nk = 2\n",
    "dotted user redefined": HEAD + _items("a") + "[user]\nx.y = 1\n" + _items("b") + "[user.x]\nz = 1\n",
}


@pytest.mark.parametrize("name", sorted(ACROSS))
@pytest.mark.parametrize("fast", [True, False])
def test_tables_across_pieces_mean_what_tomllib_says(name, fast):
    text = ACROSS[name]
    try:
        want = ("ok", tomllib.loads(text))
    except tomllib.TOMLDecodeError:
        want = ("error", None)
    try:
        got = ("ok", toml_chunks.parse_chunked(text, source="f.toml", fast=fast, size=1))
    except SteelyardError as exc:
        got = ("error", None)
        assert str(exc).startswith("f.toml: not valid TOML"), str(exc)
    assert got == want


def test_refused_tables_across_pieces_are_refused_by_the_reader():
    for name in ("units twice", "array then table", "inline array then tables", "user twice"):
        with pytest.raises(SteelyardError, match="not valid TOML"):
            ledger_from_text(ACROSS[name], source="f.toml", chunk_chars=1)
    # units after the items: valid TOML; the items are in pounds either way
    led = ledger_from_text(ACROSS["units after items"], source="f.toml", chunk_chars=1)
    assert led == _whole(ACROSS["units after items"], "f.toml")
    assert led.items[0].mass == pytest.approx(0.45359237)  # 1 lb in kg, exact by definition (NIST SP 811)


@pytest.mark.parametrize("quote", ['"""', "'''"])
def test_multi_line_strings_are_never_cut(quote):
    body = f"[[item]]\nid = \"x\"\nmass = 1.0\ncg = [0, 0, 0]\n"
    text = HEAD + _items("a") + f"[user]\nnote = {quote}\n{body}{quote}\n" + _items("b")
    assert toml_chunks.cuts(text, 1) is None
    want = tomllib.loads(text)
    assert want["user"]["note"].startswith("[[item]]")  # a cut there would have split the string
    assert toml_chunks.parse_chunked(text, source="f", size=1) == want
    led = ledger_from_text(text, source="f", chunk_chars=1)
    assert [it.id for it in led.items] == ["a", "b"]


def test_a_late_bad_item_is_named(tmp_path):
    path = tmp_path / "late.toml"
    make_ledger.write_ledger(path, 3000, seed=4)
    text = path.read_text(encoding="utf-8")
    marker = 'id = "p002700"\n'
    at = text.index(marker)
    line_end = text.index("\n", text.index("mass = ", at))
    bad = text[:text.index("mass = ", at)] + 'mass = "heavy"' + text[line_end:]
    with pytest.raises(SteelyardError) as cut:
        ledger_from_text(bad, source=str(path), chunk_chars=2048)
    with pytest.raises(SteelyardError) as whole:
        _whole(bad, str(path))
    message = str(cut.value)
    assert message == str(whole.value)
    assert str(path) in message and "p002700" in message and "mass" in message
    assert "\n" not in message
    # a duplicate id in a later piece names the first use, as the whole reading does
    dup = text.replace('id = "p002900"', 'id = "p000003"')
    with pytest.raises(SteelyardError) as cut:
        ledger_from_text(dup, source=str(path), chunk_chars=2048)
    assert "duplicate id (first used by item #3)" in str(cut.value)


def test_items_pickle_and_share_the_empty_units():
    text = HEAD + _items("a", "b")
    led = ledger_from_text(text, source="f", chunk_chars=1)
    assert led.items[0].given_units is NO_UNITS and led.items[1].given_units is NO_UNITS
    again = pickle.loads(pickle.dumps(led.items))
    assert again == led.items and again[0].given_units is NO_UNITS
    arrays = pickle.loads(pickle.dumps(led.arrays))
    assert np.array_equal(arrays.cg, led.arrays.cg)
    assert not hasattr(led.items[0], "__dict__")  # slotted
    assert NO_UNITS == {} and dict(NO_UNITS) == {} and len(NO_UNITS) == 0


def test_items_from_columns_are_the_constructors_items():
    made = items_from_columns(2, {"id": ["a", "b"], "mass": [1.0, 2.0], "cg": [(0.0, 0.0, 0.0), (1.0, 2.0, 3.0)],
                                  "quantity": [1, 4]}, group="g")
    assert made == [Item("a", 1.0, (0.0, 0.0, 0.0), group="g"), Item("b", 2.0, (1.0, 2.0, 3.0), group="g",
                                                                         quantity=4)]
    assert made[1].evolve(mass=3.0).mass == 3.0 and made[1].mass == 2.0


def test_standard_library_parser_still_reads_everything(tmp_path):
    """STEELYARD_TOML=tomllib (no compiled parser): same roll-up, same refusal words."""
    import os

    from support.cli import run_process

    env = {**os.environ, "STEELYARD_TOML": "tomllib", "PYTHONPATH": os.pathsep.join(
        p for p in (str(Path(__file__).resolve().parents[1] / "src"), os.environ.get("PYTHONPATH")) if p)}
    path = tmp_path / "gen.toml"
    make_ledger.write_ledger(path, 300, seed=5)
    plain = run_process("rollup", "--json", path, env=env)
    fast = run_process("rollup", "--json", path)
    assert plain.returncode == fast.returncode == 0, plain.stderr
    assert plain.stdout == fast.stdout
    bad = tmp_path / "bad.toml"
    bad.write_text(HEAD + _items("a") + "[units]\nlength = 'm'\n" + _items("b"), encoding="utf-8")
    try:
        tomllib.loads(bad.read_text(encoding="utf-8"))
    except tomllib.TOMLDecodeError as exc:
        words = str(exc)
    refused = [run_process("rollup", "--json", bad, env=env), run_process("rollup", "--json", bad)]
    for out in refused:
        assert out.returncode == 2 and words in out.stderr and str(bad) in out.stderr, out.stderr
