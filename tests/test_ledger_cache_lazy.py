"""A read-cache hit makes its Items only when asked (io.ledger.cache_codec.CachedLedger).

Reference throughout: the uncached read of the same bytes (`open_ledger` with the cache off), and
the same operation (evolve, with_item, replace, pickle, copy) applied to it. Damage is made in a
well-formed pickle (so the entry's sha256 sums still hold) and must be a miss, as an uncached read.
conftest gives every test its own empty cache folder (STEELYARD_CACHE_DIR).
"""

from __future__ import annotations

import copy
import dataclasses
import hashlib
import json
import pickle
import shutil
import struct
import sys
import threading
from pathlib import Path

import numpy as np
import pytest

from support.calls import count_calls

from support.cli import run_main
from support.paths import FIXTURES, ROOT

sys.path.insert(0, str(ROOT / "tests" / "perf"))
from make_ledger import write_ledger  # noqa: E402 - the generator the benchmarks use

from steelyard.core.document.model import Ledger  # noqa: E402
from steelyard.io.ledger import cache, cache_codec  # noqa: E402
from steelyard.io.ledger.cache import same_reading  # noqa: E402
from steelyard.io.ledger.file import open_ledger  # noqa: E402

PATHS = sorted(FIXTURES.glob("*.toml")) + [FIXTURES / "quad-freighter" / "quad-freighter.toml"]


@pytest.fixture
def builds(monkeypatch):
    """How many times a hit's Items were made."""
    monkeypatch.delenv("STEELYARD_NO_CACHE", raising=False)
    return count_calls(monkeypatch, cache_codec, "_make_items")


def _hit(path: Path) -> Ledger:
    open_ledger(path, cache=True)  # a miss: writes the entry
    loaded = open_ledger(path, cache=True)
    assert loaded.from_cache
    return loaded.ledger


def _generated(tmp_path: Path, n: int = 800, seed: int = 5) -> Path:
    path = tmp_path / f"gen-{seed}.toml"
    write_ledger(str(path), n, seed=seed)
    return path


@pytest.mark.parametrize("path", PATHS, ids=lambda p: p.name)
def test_a_hit_makes_its_items_once_and_only_when_asked(builds, path):
    fresh = open_ledger(path).ledger
    hit = _hit(path)
    assert type(hit) is cache_codec.CachedLedger and builds[0] == 0
    assert hit.index == fresh.index and builds[0] == 0  # the index comes from the ids alone
    assert same_reading(hit, fresh)  # reads every field: the items are made here
    assert builds[0] == 1 and type(hit) is Ledger
    assert hit.items == fresh.items and builds[0] == 1  # kept: never made twice
    assert "_cached_item_columns" not in hit.__dict__  # the columns are let go once made


def test_rollup_json_on_a_hit_never_makes_the_items(capsys, builds, tmp_path):
    # A roll-up reads the numpy columns; the items are read only to name one in a refusal.
    for path in [*PATHS, _generated(tmp_path)]:
        reference = run_main(capsys, "--no-cache", "rollup", "--json", path)
        run_main(capsys, "rollup", "--json", path)  # a miss: writes the entry
        assert run_main(capsys, "rollup", "--json", path) == reference
        assert builds[0] == 0, path.name


def test_a_refusal_on_a_hit_names_the_item_as_uncached(capsys, builds, tmp_path):
    # Two masses of 1e308 kg sum beyond a float's range (IEEE 754 binary64 max is about 1.8e308): each
    # item reads, the roll-up overflows and the error names the item, from a hit as from a fresh read
    # (reference: the --no-cache run).
    path = tmp_path / "huge.toml"
    path.write_text('steelyard = 1\n[[item]]\nid = "small"\nmass = 1.0\ncg = [0.0, 0.0, 0.0]\n'
                    + "".join(f'[[item]]\nid = "big-{c}"\nmass = 1e308\ncg = [1.0, 0.0, 0.0]\n' for c in "ab"))
    reference = run_main(capsys, "--no-cache", "rollup", "--json", path)
    run_main(capsys, "rollup", "--json", path)
    assert run_main(capsys, "rollup", "--json", path) == reference
    assert "big-a" in str(reference) and builds[0] == 1


@pytest.mark.parametrize("path", PATHS, ids=lambda p: p.name)
def test_edits_on_a_hit_are_edits_on_a_fresh_read(builds, path):
    fresh = open_ledger(path).ledger
    own = [it for it in fresh.items if it.source is None]
    if not own:
        pytest.fail(f"{path.name} has no item of its own to edit")
    first, last = own[0], own[-1]
    moved = first.evolve(mass=first.mass * 2 + 1.0, cg=(1.0, 2.0, 3.0))
    added = dataclasses.replace(last, id=last.id + "-copy")
    cases = [
        lambda led: led.with_item(moved),
        lambda led: led.with_item(added),
        lambda led: led.without_item(last.id),
        lambda led: led.evolve(user={"note": "edited"}),
        lambda led: led.evolve(items=led.items[:1]),
        lambda led: dataclasses.replace(led, loadouts=()),
    ]
    for edit in cases:
        hit = _hit(path)
        got, want = edit(hit), edit(fresh)
        assert type(got) is Ledger, "an edit of a hit is a plain ledger"
        assert same_reading(got, want) and got.items == want.items and got.index == want.index


def test_replace_without_reading_the_items_leaves_the_hit_lazy(builds, tmp_path):
    path = _generated(tmp_path)
    fresh = open_ledger(path).ledger
    hit = _hit(path)
    other = dataclasses.replace(hit, items=fresh.items[:3])
    assert type(other) is Ledger and other.items == fresh.items[:3] and builds[0] == 0
    assert type(hit) is cache_codec.CachedLedger
    assert hit.items == fresh.items and builds[0] == 1


def test_equality_pickle_and_copies_of_a_hit_are_those_of_a_fresh_read(builds, tmp_path):
    path = _generated(tmp_path)
    fresh = open_ledger(path).ledger
    assert _hit(path) == fresh and fresh == _hit(path) and _hit(path) == _hit(path)
    assert hash(_hit(path).units) == hash(fresh.units)
    for copied in (pickle.loads(pickle.dumps(_hit(path))), copy.copy(_hit(path)), copy.deepcopy(_hit(path))):
        assert type(copied) is Ledger and copied.items == fresh.items and copied.index == fresh.index
    assert repr(_hit(path)) == repr(fresh)
    assert [f.name for f in dataclasses.fields(_hit(path))] == [f.name for f in dataclasses.fields(fresh)]
    assert dataclasses.asdict(_hit(path))["items"] == dataclasses.asdict(fresh)["items"]
    # a made hit stores again like a fresh read (the codec refuses anything but a plain Ledger)
    hit = _hit(path)
    assert cache_codec.dumps(hit) is None  # not made yet: a hit is never stored again
    hit.items
    again = cache_codec.loads(cache_codec.dumps(hit))
    assert same_reading(again, fresh) and again.items == fresh.items


def test_threads_asking_at_once_get_one_tuple(builds, tmp_path):
    # The editor reads in a worker thread and may read the items from the main thread too.
    path = _generated(tmp_path, n=3000)
    fresh = open_ledger(path).ledger
    hit = _hit(path)
    got, start = [], threading.Barrier(6)

    def read():
        start.wait()
        got.append(hit.items)

    threads = [threading.Thread(target=read) for _ in range(6)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert len(got) == 6 and all(g is got[0] for g in got) and builds[0] == 1
    assert got[0] == fresh.items


def _payload(entry: Path) -> tuple[bytes, int, tuple]:
    blob = entry.read_bytes()
    at = len(cache.MAGIC)
    (n,) = struct.unpack_from(">I", blob, at)
    start = at + 4 + n + 32
    return blob, start, pickle.loads(blob[start:])  # our own entry: plain pickle reads it


def _with_payload(blob: bytes, start: int, body: tuple) -> bytes:
    """The entry with another (well-formed) payload, its size and sha256 made right again."""
    at = len(cache.MAGIC)
    (n,) = struct.unpack_from(">I", blob, at)
    h = json.loads(blob[at + 4:at + 4 + n])
    raw_body = pickle.dumps(body, protocol=5)
    h["size"], h["sha256"] = len(raw_body), hashlib.sha256(raw_body).hexdigest()
    raw = json.dumps(h).encode()
    return cache.MAGIC + struct.pack(">I", len(raw)) + raw + hashlib.sha256(raw).digest() + raw_body


def _damaged(kind: str, column: tuple, n: int) -> tuple | None:
    """One damage of `column` (None: this kind does not apply to its form)."""
    form = column[0]
    if kind == "unknown-kind":
        return ("zipped",) + column[1:]
    if kind == "wrong-count" and form in ("text", "floats"):
        return (form, n + 1) + column[2:]
    if kind == "one-value-short" and form == "text":
        return ("text", n, column[2].rsplit("\0", 1)[0])
    if kind == "one-value-short" and form == "list":
        return ("list", column[1][:-1])
    if kind == "one-value-short" and form == "floats":
        return column[:4] + (column[4][:-1],)
    if kind == "gap-out-of-range" and form == "floats" and column[3]:
        return column[:3] + ([*column[3][:-1], n + 5],) + column[4:]
    if kind == "gap-twice" and form == "floats" and len(column[3]) >= 2:
        gaps = column[3]
        return column[:3] + ([gaps[0], gaps[0], *gaps[2:]],) + column[4:]
    if kind == "wrong-dtype" and form == "floats":
        return column[:4] + (column[4].astype(np.float32),)
    return None


DAMAGES = ["unknown-kind", "wrong-count", "one-value-short", "gap-out-of-range", "gap-twice", "wrong-dtype"]


@pytest.mark.parametrize("kind", DAMAGES)
def test_a_damaged_column_is_a_miss_at_lookup_never_an_error_later(capsys, builds, tmp_path, kind):
    # Damage in a well-formed pickle passes the sha256 sums (they are the entry's own); the columns
    # are checked whole when the entry is loaded, so the command reads afresh and says the same.
    path = _generated(tmp_path)
    reference = run_main(capsys, "--no-cache", "check", "--json", path)
    open_ledger(path, cache=True)
    (entry,) = sorted(Path(cache.cache_dir()).glob("*" + cache.SUFFIX))
    blob, start, (names, n, columns, state) = _payload(entry)
    damaged = 0
    for i, column in enumerate(columns):
        bad = _damaged(kind, column, n)
        if bad is None:
            continue
        damaged += 1
        wrong = list(columns)
        wrong[i] = bad
        bad_entry = _with_payload(blob, start, (names, n, wrong, state))
        entry.write_bytes(bad_entry)
        assert run_main(capsys, "check", "--json", path) == reference, (kind, names[i])  # reads every item
        entry.write_bytes(bad_entry)  # the run above wrote a good entry over it
        assert open_ledger(path, cache=True).from_cache is False, (kind, names[i])  # refused at lookup
        entry.write_bytes(blob)  # the good entry again for the next column
    assert damaged, f"no column of the generated ledger takes damage {kind!r}"
