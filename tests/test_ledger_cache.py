"""The read cache (io.ledger.cache): a hit says exactly what a fresh read says; anything doubtful is a miss.

Reference throughout: the same command, or `open_ledger`, with the cache off (the uncached read of
the same bytes). Damage is detected by the entry's own sha256 sums (FIPS 180-4, hashlib) and the
program tag; a foreign pickle is refused by the restricted unpickler (pickle docs, "Restricting
Globals"). conftest gives every test its own empty cache folder (STEELYARD_CACHE_DIR).
"""

from __future__ import annotations

import hashlib
import json
import os
import pickle
import shutil
import struct
import sys
from pathlib import Path

import pytest

from support.calls import count_calls

from support.cli import run_main, run_process
from support.paths import FIXTURES, ROOT

sys.path.insert(0, str(ROOT / "tests" / "perf"))
from make_ledger import write_ledger  # noqa: E402 - the generator the benchmarks use

import steelyard.io.ledger.file as file_mod  # noqa: E402
from steelyard.io.ledger import cache  # noqa: E402
from steelyard.io.ledger.file import cached_open, open_ledger  # noqa: E402

TREE = FIXTURES / "quad-freighter"
SINGLE = sorted(p.name for p in FIXTURES.glob("*.toml"))


@pytest.fixture
def parses(monkeypatch):
    """How many times a ledger's bytes were parsed (a hit parses nothing)."""
    monkeypatch.delenv("STEELYARD_NO_CACHE", raising=False)
    return count_calls(monkeypatch, file_mod, "ledger_from_bytes")


def folder() -> Path:
    return Path(os.environ["STEELYARD_CACHE_DIR"])


def entries() -> list[Path]:
    return sorted(folder().glob("*" + cache.SUFFIX)) if folder().exists() else []


def commands(path: Path, other: Path) -> list[list[str]]:
    return [["rollup", "--json", str(path)], ["check", "--json", str(path)],
            ["diff", "--json", str(path), str(other)], ["diff", "--json", str(other), str(path)]]


def same_as_uncached(capsys, parses, argv: list[str]) -> None:
    """The command reads the same with the cache off, on a miss (which writes) and on a hit."""
    reference = run_main(capsys, "--no-cache", *argv)
    miss = run_main(capsys, *argv)
    before = parses[0]
    hit = run_main(capsys, *argv)
    assert parses[0] == before, "the second run parsed again: not a hit"
    assert miss == reference, argv
    assert hit == reference, argv


@pytest.mark.parametrize("name", SINGLE)
def test_every_fixture_reads_the_same_from_the_cache(capsys, parses, name):
    path = FIXTURES / name
    other = FIXTURES / ("trainer.toml" if name != "trainer.toml" else "trainer-overweight.toml")
    for argv in commands(path, other):
        same_as_uncached(capsys, parses, argv)
    assert entries(), "nothing was written to the cache"


def test_the_assembly_tree_reads_the_same_from_the_cache(capsys, parses):
    top = TREE / "quad-freighter.toml"
    for argv in commands(top, FIXTURES / "cargo-drone.toml"):
        same_as_uncached(capsys, parses, argv)


def test_a_generated_ledger_reads_the_same_from_the_cache(capsys, parses, tmp_path):
    a, b = tmp_path / "gen-a.toml", tmp_path / "gen-b.toml"
    write_ledger(str(a), 1500, seed=3)
    write_ledger(str(b), 1500, seed=4)
    for argv in commands(a, b):
        same_as_uncached(capsys, parses, argv)
    fresh = open_ledger(a)
    cached = open_ledger(a, cache=True)
    assert cached.ledger.items == fresh.ledger.items and cached.ledger.index == fresh.ledger.index
    assert (cached.sha256, cached.had_comments, cached.path) == (fresh.sha256, fresh.had_comments, fresh.path)
    assert (cached.ledger.arrays.own == fresh.ledger.arrays.own).all()


def test_reading_notes_are_printed_on_a_hit_too(capsys, parses, tmp_path):
    path = tmp_path / "notes.toml"  # lb and in with a bare inertia number: the reader notes the unit it took
    path.write_text('steelyard = 1\n[units]\nmass = "lb"\nlength = "in"\n\n[[item]]\nid = "box"\nmass = 2\n'
                    'cg = [1, 2, 3]\ninertia = { xx = 1, yy = 1, zz = 1 }\n')
    reference = run_main(capsys, "--no-cache", "rollup", "--json", path)
    assert "note:" in reference[2]
    run_main(capsys, "rollup", "--json", path)
    before = parses[0]
    assert run_main(capsys, "rollup", "--json", path) == reference
    assert parses[0] == before


def test_a_hit_clears_a_failed_mark_like_a_read(parses, tmp_path):
    from steelyard.io.durability import atomic

    path = tmp_path / "t.toml"
    shutil.copy(FIXTURES / "trainer.toml", path)
    open_ledger(path, cache=True)
    atomic.mark_failed(path)
    open_ledger(path, cache=True)
    assert parses[0] == 1
    assert os.path.realpath(path) not in atomic._FAILED_LOADS


def test_a_file_that_fails_is_never_cached(parses, tmp_path):
    from steelyard.core.errors import SteelyardError

    path = tmp_path / "bad.toml"
    path.write_text("steelyard = 1\n[[item]]\nid = \"a\"\nmass = -1\ncg = [0, 0, 0]\n")
    with pytest.raises(SteelyardError):
        open_ledger(path, cache=True)
    assert entries() == []


def test_a_changed_file_is_read_again(parses, tmp_path):
    path = tmp_path / "t.toml"
    shutil.copy(FIXTURES / "trainer.toml", path)
    open_ledger(path, cache=True)
    text = path.read_text().replace("steelyard = 1", "steelyard = 1\n# a comment", 1)
    path.write_text(text)
    again = open_ledger(path, cache=True)
    assert parses[0] == 2 and again.sha256 == hashlib.sha256(path.read_bytes()).hexdigest()
    assert len(entries()) == 1  # the stale entry was written over, not kept beside


def _tree(tmp_path) -> Path:
    shutil.copytree(TREE, tmp_path / "tree")
    return tmp_path / "tree" / "quad-freighter.toml"


def _child(top: Path) -> Path:
    import tomllib  # the stdlib reading names the placed files

    return top.parent / tomllib.loads(top.read_text())["assembly"][0]["file"]


def test_editing_a_placed_file_invalidates_the_tree(capsys, parses, tmp_path):
    top = _tree(tmp_path)
    argv = ["rollup", "--json", str(top)]
    run_main(capsys, *argv)
    child = _child(top)
    import re

    text = child.read_text()
    changed = re.sub(r"(?m)^mass = ([0-9.]+)", lambda m: f"mass = {float(m.group(1)) + 1.5}", text, count=1)
    assert changed != text
    child.write_text(changed)
    before = parses[0]
    now = run_main(capsys, *argv)
    assert parses[0] > before, "a changed placed file must be read again"
    assert now == run_main(capsys, "--no-cache", *argv)


def test_a_removed_placed_file_is_the_same_error_as_uncached(capsys, parses, tmp_path):
    top = _tree(tmp_path)
    argv = ["rollup", "--json", str(top)]
    assert run_main(capsys, *argv)[0] == 0
    child = _child(top)
    child.unlink()
    got = run_main(capsys, *argv)
    assert got[0] == 2 and got == run_main(capsys, "--no-cache", *argv)


def test_same_bytes_at_another_path_name_their_own_path(capsys, parses, tmp_path):
    a, b = tmp_path / "a.toml", tmp_path / "b.toml"
    shutil.copy(FIXTURES / "trainer.toml", a)
    shutil.copy(FIXTURES / "trainer.toml", b)
    assert open_ledger(a, cache=True).path == str(a)
    assert open_ledger(b, cache=True).path == str(b)
    assert open_ledger(b, cache=True).path == str(b)
    assert len(entries()) == 2
    reference = run_main(capsys, "--no-cache", "rollup", b)
    assert run_main(capsys, "rollup", b) == reference and str(b) in reference[1]


# ------------------------------------------------------------------ damage
def _entry_for(path: Path) -> Path:
    open_ledger(path, cache=True)
    (entry,) = entries()
    return entry


def _rebuild(blob: bytes, *, header: dict | None = None, payload: bytes | None = None) -> bytes:
    """An entry with the given header fields or payload, its lengths and sums made right again."""
    at = len(cache.MAGIC)
    (n,) = struct.unpack_from(">I", blob, at)
    h = json.loads(blob[at + 4:at + 4 + n])
    body = blob[at + 4 + n + 32:] if payload is None else payload
    h.update(header or {})
    h["size"], h["sha256"] = len(body), hashlib.sha256(body).hexdigest()
    raw = json.dumps(h).encode()
    return cache.MAGIC + struct.pack(">I", len(raw)) + raw + hashlib.sha256(raw).digest() + body


class _Boom:
    def __reduce__(self):
        return (os.system, (f"touch {os.environ['STEELYARD_CACHE_DIR']}/../PWNED",))


DAMAGE = {
    "truncated": lambda b: b[: len(b) // 2],
    "truncated-header": lambda b: b[: len(cache.MAGIC) + 10],
    "payload-bit-flipped": lambda b: b[:-100] + bytes([b[-100] ^ 0x04]) + b[-99:],
    "header-bit-flipped": lambda b: b[:40] + bytes([b[40] ^ 0x01]) + b[41:],
    "wrong-magic": lambda b: b"x" + b[1:],
    "wrong-version": lambda b: _rebuild(b, header={"program": "steelyard 0.0.1; older"}),
    "random-bytes": lambda b: os.urandom(len(b)),
    "empty": lambda b: b"",
    "pickle-of-another-object": lambda b: _rebuild(b, payload=pickle.dumps({"items": [1, 2, 3]})),
    "malicious-pickle": lambda b: _rebuild(b, payload=pickle.dumps(_Boom())),
    "stdlib-function": lambda b: _rebuild(b, payload=pickle.dumps(shutil.rmtree)),
}


@pytest.mark.parametrize("kind", sorted(DAMAGE))
def test_a_damaged_or_foreign_entry_is_ignored_and_rebuilt(capsys, parses, tmp_path, kind):
    path = tmp_path / "t.toml"
    shutil.copy(FIXTURES / "cargo-drone.toml", path)
    entry = _entry_for(path)
    entry.write_bytes(DAMAGE[kind](entry.read_bytes()))
    before = parses[0]
    reference = run_main(capsys, "--no-cache", "rollup", "--json", path)
    assert run_main(capsys, "rollup", "--json", path) == reference
    assert parses[0] == before + 2, "the damaged entry was trusted"
    assert not (folder().parent / "PWNED").exists()
    run_main(capsys, "rollup", "--json", path)
    assert parses[0] == before + 2, "the entry was not rebuilt"


def test_the_restricted_unpickler_refuses_code():
    from steelyard.io.ledger.cache_codec import Refused, loads

    for thing in (_Boom(), os.system, shutil.rmtree, eval):
        with pytest.raises(Refused):
            loads(pickle.dumps(thing))


def test_another_programs_sources_are_another_program(monkeypatch, parses, tmp_path):
    path = tmp_path / "t.toml"
    shutil.copy(FIXTURES / "trainer.toml", path)
    open_ledger(path, cache=True)
    monkeypatch.setattr(cache, "_PROGRAM", ["steelyard 0.1.0; edited sources"])
    open_ledger(path, cache=True)
    assert parses[0] == 2


# ------------------------------------------------------------------ turned off, unwritable, bounded
@pytest.mark.parametrize("how", ["option-before", "option-after", "environment"])
def test_turned_off_neither_reads_nor_writes(capsys, monkeypatch, parses, tmp_path, how):
    path = tmp_path / "t.toml"
    shutil.copy(FIXTURES / "trainer.toml", path)
    argv = {"option-before": ["--no-cache", "rollup", "--json", path],
            "option-after": ["rollup", "--no-cache", "--json", path],
            "environment": ["rollup", "--json", path]}[how]
    if how == "environment":
        monkeypatch.setenv("STEELYARD_NO_CACHE", "1")
    assert run_main(capsys, *argv)[0] == 0
    assert not folder().exists(), "turned off, the cache folder was written"
    monkeypatch.delenv("STEELYARD_NO_CACHE", raising=False)
    entry = _entry_for(path)  # now an entry exists: turned off, it is not read (nor touched)
    os.utime(entry, (1, 1))
    if how == "environment":
        monkeypatch.setenv("STEELYARD_NO_CACHE", "1")
    before = parses[0]
    assert run_main(capsys, *argv)[0] == 0
    assert parses[0] == before + 1 and entry.stat().st_mtime == 1
    monkeypatch.delenv("STEELYARD_NO_CACHE", raising=False)
    open_ledger(path, cache=True)
    assert parses[0] == before + 1, "--no-cache outlived its command line"


def test_turned_off_in_a_fresh_process(tmp_path):
    env = dict(os.environ, STEELYARD_CACHE_DIR=str(tmp_path / "c"), STEELYARD_NO_CACHE="1")
    out = run_process("rollup", FIXTURES / "trainer.toml", env=env)
    assert out.returncode == 0 and not (tmp_path / "c").exists()
    env.pop("STEELYARD_NO_CACHE")
    out = run_process("rollup", FIXTURES / "trainer.toml", env=env)
    assert out.returncode == 0 and len(list((tmp_path / "c").iterdir())) == 1


def test_an_unwritable_cache_folder_never_fails_the_command(capsys, monkeypatch, parses, tmp_path):
    blocker = tmp_path / "a-file"
    blocker.write_text("not a folder")
    monkeypatch.setenv("STEELYARD_CACHE_DIR", str(blocker / "cache"))  # cannot be made, even by root
    argv = ["rollup", "--json", FIXTURES / "trainer.toml"]
    reference = run_main(capsys, "--no-cache", *argv)
    assert run_main(capsys, *argv) == reference
    assert run_main(capsys, *argv) == reference


def test_the_folder_stays_within_its_bounds(monkeypatch, parses, tmp_path):
    monkeypatch.setattr(cache, "MAX_ENTRIES", 3)
    paths = []
    for i, name in enumerate(SINGLE):
        p = tmp_path / f"{i}-{name}"
        shutil.copy(FIXTURES / name, p)
        open_ledger(p, cache=True)
        paths.append(p)
        assert len(entries()) <= 3
    assert len(paths) > 3 and len(entries()) == 3
    newest = {cache.entry_path(str(p)) for p in paths[-3:]}
    assert set(entries()) == newest  # the least recently used went first
    sizes = sorted(e.stat().st_size for e in entries())
    cache.evict(folder(), max_bytes=sizes[0] + sizes[1])
    assert sum(e.stat().st_size for e in entries()) <= sizes[0] + sizes[1] and len(entries()) < 3


def test_commands_that_write_a_ledger_read_it_afresh(capsys, parses, tmp_path):
    path = tmp_path / "t.toml"
    shutil.copy(FIXTURES / "trainer.toml", path)
    open_ledger(path, cache=True)
    before = parses[0]
    code, _, err = run_main(capsys, "convert-units", path, "--mass", "lb", "--output", tmp_path / "lb.toml")
    assert code == 0, err
    code, _, err = run_main(capsys, "snapshot", path, "--output", tmp_path / "snap.toml")
    assert code == 0, err
    assert parses[0] >= before + 2, "a writer read from the cache"


def test_cached_open_is_a_hit_or_none(parses, tmp_path):
    path = tmp_path / "t.toml"
    shutil.copy(FIXTURES / "trainer.toml", path)
    assert cached_open(path) is None and parses[0] == 0
    fresh = open_ledger(path, cache=True)
    hit = cached_open(path)
    assert hit is not None and hit.ledger.items == fresh.ledger.items and parses[0] == 1
    assert cached_open(tmp_path / "missing.toml") is None
    path.write_text(path.read_text() + "\n")
    assert cached_open(path) is None


@pytest.mark.parametrize("name", SINGLE + ["quad-freighter/quad-freighter.toml"])
def test_same_reading_tells_two_readings_apart_only_when_they_differ(name):
    # What an editor's save checks after a cached open: two fresh reads of one file are the same
    # reading; any changed item value or table is not (reference: the file read twice, uncached).
    from dataclasses import replace

    from steelyard.io.ledger.cache import same_reading

    path = FIXTURES / name
    a, b = open_ledger(path).ledger, open_ledger(path).ledger
    assert same_reading(a, b)
    if a.items:
        items = list(b.items)
        items[-1] = replace(items[-1], mass=items[-1].mass + 1e-9)
        assert not same_reading(a, b.evolve(items=tuple(items)))
    assert not same_reading(a, b.evolve(user={"note": "another"} if a.user != {"note": "another"} else None))
