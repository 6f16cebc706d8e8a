"""A text read through a memory of an earlier reading means exactly what a fresh reading means.

References: a fresh reading of the same text (itself held to the standard
library's tomllib and to the item-by-item reader in tests/test_chunked_read.py),
compared ledger for ledger, column for column and error for error; tomllib's
own reading of the later text for the values of the rows taken from the earlier
reading; and, for the diff, the record of what the perturbation changed
(tests/perf/bench_diff.perturb counts its own edits).
"""

from __future__ import annotations

import importlib.util
import json
import re
import tomllib
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

from steelyard.core.document.model import rows_with
from steelyard.core.errors import SteelyardError
from steelyard.core.history.diff import carried, compare, compare_carried
from steelyard.io.exchange.diff_json import diff_record
from steelyard.io.ledger.read import reading_notes
from steelyard.io.ledger.read_reuse import ReadMemory
from steelyard.io.ledger.read_stream import ledger_from_text
from support.cli import run_main
from support.paths import FIXTURES

_HERE = Path(__file__).parent / "perf"


def _module(name: str):
    spec = importlib.util.spec_from_file_location(f"_{name}", _HERE / f"{name}.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


make_ledger = _module("make_ledger")
bench_diff = _module("bench_diff")

GOOD = sorted(p for p in FIXTURES.rglob("*.toml") if "bad" not in p.parts)
SMALL = 700  # characters per piece: a file is cut every few items, so tables meet piece ends often
LB = 0.45359237  # kg per lb, exact by definition (NIST SP 811, appendix B)
INCH = 0.0254  # m per in, exact by definition (NIST SP 811)


def _read(text: str, memory=None, source: str = "b.toml"):
    return ledger_from_text(text, source=source, chunk_chars=SMALL, memory=memory)


def _outcome(read):
    try:
        return "ok", read()
    except SteelyardError as exc:
        return "error", str(exc)


def _same(a, b) -> None:
    assert a.items == b.items
    assert replace(a, placed=()) == replace(b, placed=())
    assert repr(a.placed) == repr(b.placed)  # placements hold numpy arrays: compared as written out
    for col in ("unit_mass", "quantity", "cg", "own", "variable"):
        assert np.array_equal(getattr(a.arrays, col), getattr(b.arrays, col)), col
    ra, va = a.arrays.own_sparse()
    rb, vb = b.arrays.own_sparse()
    assert np.array_equal(ra, rb) and np.array_equal(va, vb)
    assert a.index == b.index
    assert reading_notes(a) == reading_notes(b)


def _through(a_text: str, b_text: str, chain: bool = True, source: str = "b.toml"):
    memory = ReadMemory(chain=chain)
    _read(a_text, memory, source=source)
    return memory, _outcome(lambda: _read(b_text, memory, source=source))


def _tables(text: str) -> tuple[str, list[str], str]:
    """(head, item tables, tail) of a generated ledger's text."""
    head, rest = text.split("\n[[item]]\n", 1)
    body, tail = rest.split("\n[[loadout]]\n", 1)
    return head, body.split("\n[[item]]\n"), tail


def _join(head: str, tables: list[str], tail: str) -> str:
    return head + "\n[[item]]\n" + "\n[[item]]\n".join(tables) + "\n[[loadout]]\n" + tail


@pytest.fixture(scope="module")
def generated() -> str:
    return make_ledger.ledger_text(400, seed=3)


@pytest.mark.parametrize("path", GOOD, ids=lambda p: str(p.relative_to(FIXTURES)))
def test_every_fixture_read_again_through_its_own_memory_is_the_fresh_reading(path):
    text = path.read_text(encoding="utf-8")
    fresh = _outcome(lambda: _read(text, source=str(path)))
    memory, again = _through(text, text, source=str(path))
    assert again[0] == fresh[0]
    if fresh[0] == "ok":
        _same(again[1], fresh[1])
    else:
        assert again[1] == fresh[1]


@pytest.mark.parametrize("seed", [1, 2, 5])
def test_a_perturbed_ledger_read_through_the_original_is_the_fresh_reading(generated, seed):
    b_text, counts = bench_diff.perturb(generated, seed)
    memory, got = _through(generated, b_text)
    assert got[0] == "ok", got[1]
    _same(got[1], _read(b_text))
    # most tables were taken from the earlier reading (the path under test ran), not all
    assert 0 < memory.reused < len(got[1].items)
    # the rows taken over hold the values tomllib reads in B's own text (lb and in, NIST SP 811 factors)
    doc = tomllib.loads(b_text)
    by_id = {t["id"]: t for t in doc["item"]}
    for i, it in enumerate(got[1].items):
        t = by_id[it.id]
        assert got[1].arrays.unit_mass[i] == t["mass"] * LB
        assert np.array_equal(got[1].arrays.cg[i], np.array(t["cg"], dtype=float) * INCH)
        assert it.name == t.get("name", "") and it.group == t.get("group", "")
        assert it.quantity == t.get("quantity", 1) and it.variable == t.get("variable", False)


def test_a_chain_of_versions_each_read_through_the_one_before(generated):
    texts = [generated] + [bench_diff.perturb(generated, seed)[0] for seed in (11, 12, 13)]
    memory = ReadMemory()
    for t in texts:
        _same(_read(t, memory), _read(t))


def test_equal_hashes_alone_take_nothing(generated, monkeypatch):
    # every table text hashed alike (the worst collisions): the texts decide, and the reading is the
    # fresh one; a hash that never matches takes nothing either
    import steelyard.io.ledger.read_reuse as read_reuse

    b_text = bench_diff.perturb(generated, 6)[0]
    for fake in (lambda text: 7, lambda text: id(text)):
        monkeypatch.setattr(read_reuse, "hash", fake, raising=False)
        memory, got = _through(generated, b_text)
        assert got[0] == "ok", got[1]
        _same(got[1], _read(b_text))
        assert memory.reused <= 1


def test_the_first_reading_is_kept_when_chain_is_off(generated):
    b_text = bench_diff.perturb(generated, 4)[0]
    memory = ReadMemory(chain=False)
    _read(generated, memory)
    _read(b_text, memory)
    first = memory.reused
    _read(b_text, memory)  # read against the first text again, not against b_text itself
    assert memory.reused == first < len(_read(b_text).items)


def test_a_table_copied_twice_is_the_fresh_readings_error(generated):
    head, tables, tail = _tables(generated)
    b_text = _join(head, tables[:50] + [tables[10]] + tables[50:], tail)
    memory, got = _through(generated, b_text)
    fresh = _outcome(lambda: _read(b_text))
    assert fresh[0] == "error" and "p000011" in fresh[1]  # the id of the 11th generated item
    assert got == fresh


def test_a_bad_value_in_a_changed_table_is_the_fresh_readings_error(generated):
    head, tables, tail = _tables(generated)
    tables[7] = re.sub(r"(?m)^mass = .*$", 'mass = "heavy"', tables[7], count=1)
    b_text = _join(head, tables, tail)
    memory, got = _through(generated, b_text)
    fresh = _outcome(lambda: _read(b_text))
    assert fresh[0] == "error" and "mass" in fresh[1]
    assert got == fresh


def test_another_head_takes_nothing_from_the_earlier_reading(generated):
    b_text = generated.replace('mass = "lb"', 'mass = "kg"', 1)
    assert b_text != generated
    memory, got = _through(generated, b_text)
    assert memory.reused == 0
    _same(got[1], _read(b_text))
    assert got[1].arrays.unit_mass[0] == tomllib.loads(b_text)["item"][0]["mass"]  # kg: factor 1


def test_tables_with_their_own_sub_tables_are_read_again(generated):
    head, tables, tail = _tables(generated)
    tables[3] = tables[3].rstrip("\n") + "\n\n[item.user]\nnote = \"kept\"\n"
    a_text = _join(head, tables, tail)
    tables[3] = tables[3].replace('"kept"', '"changed"')
    b_text = _join(head, tables, tail)
    memory, got = _through(a_text, b_text)
    _same(got[1], _read(b_text))
    assert got[1].items[3].user == {"note": "changed"}  # tomllib: [item.user] belongs to the 4th item


def test_a_ledger_of_unchanged_tables_only(generated):
    memory, got = _through(generated, generated)
    _same(got[1], _read(generated))
    assert memory.reused == len(got[1].items) - 1  # the last table runs into the loadouts: read again


def test_rows_with_names_the_rows_a_plain_loop_names(generated):
    ledger = _read(generated)
    items = ledger.items
    for name in ("inertia", "density", "shape", "maturity"):
        assert rows_with(items, name) == [i for i, it in enumerate(items) if getattr(it, name) is not None]
    assert rows_with(items, "variable", unset=False) == [i for i, it in enumerate(items) if it.variable is not False]
    # looking only at some rows (`among`: one, none, several): the plain loop over those rows
    shaped = [i for i, it in enumerate(items) if it.shape is not None]
    some = list(range(0, len(items), 3))
    for among in (some, [shaped[0]], [1], []):
        for names in (("shape",), ("shape", "density")):
            assert rows_with(items, *names, among=among) == [
                i for i in among if any(getattr(items[i], k) is not None for k in names)]



def test_more_rows_are_the_rows_a_plain_loop_names_and_follow_an_edit(tmp_path):
    # the rows whose Item gives a key beyond v1, against a loop over the fixture's items; after a one-row
    # edit the kept list equals one made afresh for the new ledger
    from dataclasses import replace as with_fields

    from steelyard.core.document.model import ITEM_MORE, more_rows

    path = FIXTURES / "weighing-example.toml"
    ledger = _read(path.read_text(), source=str(path))
    plain = [i for i, it in enumerate(ledger.items)
             if any(getattr(it, k) not in (None, False) for k in ITEM_MORE)]
    assert more_rows(ledger) == plain and plain  # this fixture gives maturity and tolerances
    for row, change in ((plain[0], dict(maturity=None, growth=None, tolerance=None, user=None, cg_table=None,
                                        loaded=None, removable=False)),
                        (next(i for i in range(len(ledger.items)) if i not in plain), dict(maturity="estimated"))):
        edited = ledger.with_item(with_fields(ledger.items[row], **change))
        fresh = with_fields(edited)  # the same ledger, no caches
        assert edited.__dict__["_more_rows"] == more_rows(fresh) == [
            i for i, it in enumerate(edited.items) if any(getattr(it, k) not in (None, False) for k in ITEM_MORE)]


def _plain_more(ledger) -> list[int]:
    from steelyard.core.document.model import ITEM_MORE

    return [i for i, it in enumerate(ledger.items) if any(getattr(it, k) not in (None, False) for k in ITEM_MORE)]


@pytest.mark.parametrize("seed", [1, 2, 5])
def test_more_rows_kept_through_the_memory_are_the_rows_a_plain_loop_names(generated, seed):
    # the rows giving keys beyond v1 known after a reading through the memory (taken rows from the
    # earlier reading, parsed rows looked at now) against a loop over the later ledger's items; rows
    # gain and lose such keys, tables are dropped and copied in, a chain carries the list on
    from steelyard.core.document.model import more_rows

    head, tables, tail = _tables(generated)
    gave = list(range(5, len(tables) - 1, 37))
    for k in gave:
        tables[k] = tables[k].rstrip("\n") + '\nmaturity = "layout"\n'
    a_text = _join(head, tables, tail)
    tables[gave[0]] = re.sub(r"(?m)^maturity = .*\n", "", tables[gave[0]])
    plain_row = next(k for k, t in enumerate(tables) if "maturity" not in t and k not in gave)
    tables[plain_row] = tables[plain_row].rstrip("\n") + '\nmaturity = "estimated"\n'
    b_text = bench_diff.perturb(_join(head, tables[:30] + tables[31:], tail), seed)[0]
    memory = ReadMemory()
    first = _read(a_text, memory)
    assert memory.earlier.more == _plain_more(first) and len(_plain_more(first)) == len(gave)
    got = _read(b_text, memory)
    assert memory.reused > 0
    assert got.__dict__["_more_rows"] == _plain_more(got) == more_rows(_read(b_text))
    c_text = bench_diff.perturb(a_text, seed + 100)[0]
    third = _read(c_text, memory)
    assert third.__dict__["_more_rows"] == _plain_more(third)


# ---------------------------------------------------------------------------------------------- the diff


def _ids(text: str) -> list[str]:
    return [t["id"] for t in tomllib.loads(text)["item"]]


def test_diff_through_the_memory_is_the_diff_of_two_fresh_readings(generated):
    b_text, counts = bench_diff.perturb(generated, 9)
    memory = ReadMemory(chain=False)
    a = _read(generated, memory, source="a.toml")
    b = _read(b_text, memory)
    side_a = carried(a)
    shared = compare_carried(side_a, carried(b), shared=memory.shared)
    plain = compare(_read(generated, source="a.toml"), None, _read(b_text), None)
    assert json.dumps(diff_record(shared)) == json.dumps(diff_record(plain))
    # the perturbation's own record: what it added, removed and edited (bench_diff.perturb)
    a_ids, b_ids = _ids(generated), _ids(b_text)
    assert sorted(shared.added) == sorted(set(b_ids) - set(a_ids)) and len(shared.added) == counts["added"]
    assert sorted(shared.removed) == sorted(set(a_ids) - set(b_ids)) and len(shared.removed) == counts["removed"]
    assert len(shared.changed) == counts["mass"] + counts["cg"] + counts["name"]


def test_a_wrong_hint_changes_nothing(generated):
    b_text = bench_diff.perturb(generated, 10)[0]
    a, b = _read(generated, source="a.toml"), _read(b_text)
    rng = np.random.default_rng(0)
    wrong = (rng.integers(0, len(a.items), 300), rng.integers(0, len(b.items), 300))
    hinted = compare_carried(carried(a), carried(b), shared=wrong)
    assert json.dumps(diff_record(hinted)) == json.dumps(diff_record(compare(a, None, b, None)))


def test_diff_of_two_snapshots_from_the_cli_is_the_fresh_diff(generated, tmp_path, monkeypatch, capsys):
    from steelyard.io.ledger import read_reuse

    monkeypatch.setenv("STEELYARD_NO_CACHE", "1")
    monkeypatch.setattr("steelyard.io.ledger.toml_chunks.CHUNK_CHARS", SMALL)  # read in pieces: a small file too
    b_text = bench_diff.perturb(generated, 6)[0]
    (tmp_path / "a.toml").write_text(generated)
    (tmp_path / "b.toml").write_text(b_text)
    for src, snap in (("a.toml", "sa.toml"), ("b.toml", "sb.toml")):
        code, _, err = run_main(capsys, "snapshot", tmp_path / src, "--loadout", "full", "-o", tmp_path / snap)
        assert code == 0, err
    reused = []
    start = read_reuse.ReadMemory.start
    monkeypatch.setattr(read_reuse.ReadMemory, "start",
                        lambda self, head, fast: reused.append(self) or start(self, head, fast))
    code, out, err = run_main(capsys, "diff", tmp_path / "sa.toml", tmp_path / "sb.toml", "--json")
    assert code == 1, err
    assert reused and reused[-1].reused > 0  # B's unchanged tables came from A's reading
    monkeypatch.setattr(read_reuse.ReadMemory, "start",  # no table taken from the other file
                        lambda self, head, fast: read_reuse._Reading(self, head, fast, None))
    code, plain, err = run_main(capsys, "diff", tmp_path / "sa.toml", tmp_path / "sb.toml", "--json")
    assert code == 1, err
    assert out == plain
    record = json.loads(out)
    assert set(record["added"]) == set(_ids(b_text)) - set(_ids(generated))


@pytest.mark.parametrize("bad", ['{ capacity_kg = "ten", fill = 1.0 }', "{ capacity_kg = 10.0 }",
                                 "{ capacity_kg = nan, fill = 1.0 }", "{ capacity_kg = true, fill = 1.0 }",
                                 "{ capacity_kg = 10.0, fill = inf }"])
def test_every_snapshot_marker_is_checked_whichever_rows_are_compared(tmp_path, capsys, bad):
    # a side's load-item markers are checked in bulk; one bad marker among many is still refused by name
    path, snap = tmp_path / "gen.toml", tmp_path / "snap.toml"
    path.write_text(make_ledger.ledger_text(300, seed=8))
    code, _, err = run_main(capsys, "snapshot", path, "--loadout", "full", "-o", snap)
    assert code == 0, err
    text = snap.read_text()
    marks = list(re.finditer(r"(?m)^loaded = (\{.*\})$", text))
    assert len(marks) > 5
    last = marks[-1]
    item_id = re.findall(r'(?m)^id = "([^"]+)"$', text[:last.start()])[-1]
    ledger = _read(text[:last.start(1)] + bad + text[last.end(1):], source=str(snap))
    with pytest.raises(SteelyardError) as exc:
        carried(ledger)
    assert item_id in str(exc.value) and "capacity_kg" in str(exc.value)
