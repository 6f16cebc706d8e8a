"""Checking a snapshot from its own bytes: the shortcut accepts only a file as written, and what fails still fails.

Outside reference: hashlib's SHA-256 of the file's bytes before the blank line
that precedes `[snapshot]` (what docs/format.md says `content_sha256` covers),
computed here independently of the program; tomllib for the stored hash.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import hashlib
import sys
import tomllib
from pathlib import Path

import pytest

import steelyard.io.ledger.snapshot as snapshot_mod
from steelyard.io.ledger.file import load_ledger, open_ledger
from steelyard.io.ledger.snapshot import SnapshotMismatch, snapshot_text, verify_loaded
from steelyard.io.ledger.snapshot_bytes import content_sha256_of_bytes, file_hashes, written_content_sha256

ROOT = Path(__file__).resolve().parents[1]
TAKEN = dt.datetime(2026, 1, 1, tzinfo=dt.timezone.utc)
sys.path.insert(0, str(ROOT / "tests" / "perf"))
from make_ledger import ledger_text  # noqa: E402


def _reference_sha(data: bytes) -> str:
    """docs/format.md: SHA-256 of the bytes before the blank line that precedes [snapshot]."""
    return hashlib.sha256(data[:data.index(b"\n\n[snapshot]\n") + 1]).hexdigest()


@pytest.fixture(params=["trainer", "generated"])
def snap(request, tmp_path) -> Path:
    if request.param == "trainer":
        ledger, loadout = load_ledger(ROOT / "fixtures" / "trainer.toml"), "takeoff"
    else:
        src = tmp_path / "gen.toml"
        src.write_text(ledger_text(300, seed=3))
        ledger, loadout = load_ledger(src), "full"
    path = tmp_path / "snap.toml"
    path.write_text(snapshot_text(ledger, loadout, source="src.toml", author="tester", taken=TAKEN))
    return path


class _Counting:
    """Wraps snapshot.content_hash to count regenerations of the canonical text."""

    def __init__(self, monkeypatch):
        self.calls = 0
        real = snapshot_mod.content_hash

        def counted(ledger):
            self.calls += 1
            return real(ledger)

        monkeypatch.setattr(snapshot_mod, "content_hash", counted)


def test_a_snapshot_as_written_verifies_from_its_bytes(snap, monkeypatch):
    data = snap.read_bytes()
    stored = tomllib.loads(data.decode())["snapshot"]["content_sha256"]
    assert _reference_sha(data) == stored  # the writer's file is what the format says
    loaded = open_ledger(snap)
    assert written_content_sha256(loaded) == stored
    count = _Counting(monkeypatch)
    verify_loaded(loaded)
    assert count.calls == 0  # settled by the bytes: no canonical text regenerated


def test_a_comment_or_crlf_takes_the_slow_path_and_still_verifies(snap, monkeypatch):
    text = snap.read_text()
    for variant in ("# reviewed\n" + text, text.replace("\n[[item]]\n", "\n# a note\n[[item]]\n", 1),
                    text.replace("\n", "\r\n")):
        snap.write_bytes(variant.encode())
        loaded = open_ledger(snap)
        assert written_content_sha256(loaded) != tomllib.loads(variant)["snapshot"]["content_sha256"]
        count = _Counting(monkeypatch)
        verify_loaded(loaded)
        assert count.calls == 1  # regenerated, and it still matches: the edit changed no meaning


@pytest.mark.parametrize("edit", ["number", "id", "key"])
def test_any_changed_value_id_or_key_fails(snap, edit):
    text = snap.read_text()
    head, tail = text.split("\n[snapshot]\n")
    data = tomllib.loads(text)
    item = data["item"][-1]
    if edit == "number":
        old = f"mass = {item['mass']!r}"
        new = f"mass = {item['mass'] + 0.5!r}"
    elif edit == "id":
        old, new = f'id = "{item["id"]}"', f'id = "{item["id"]}-x"'
    else:
        old, new = f'id = "{item["id"]}"', f'id = "{item["id"]}"\nremovable = true'
    i = head.rindex(old)
    head = head[:i] + new + head[i + len(old):]
    snap.write_text(head + "\n[snapshot]\n" + tail)
    with pytest.raises(SnapshotMismatch):
        verify_loaded(open_ledger(snap))


def test_an_item_added_after_the_snapshot_table_is_not_taken_on_trust(snap):
    data = snap.read_bytes()
    extra = (f'\n[[item]]\nid = "added-later"\nmass = 5.0\ncg = [1.0, 2.0, 3.0]\n').encode()
    snap.write_bytes(data + extra)
    assert content_sha256_of_bytes(snap.read_bytes()) is None  # more than the [snapshot] table follows
    with pytest.raises(SnapshotMismatch):
        verify_loaded(open_ledger(snap))


def test_bytes_changed_after_the_read_are_not_used(snap, monkeypatch):
    """A read that kept no content hash (from the cache, at a git revision) reads the file again:
    bytes that are no longer the ones the ledger came from are not used."""
    loaded = dataclasses.replace(open_ledger(snap), content_sha256=None)
    snap.write_bytes(b"# changed on disk\n" + snap.read_bytes())
    assert written_content_sha256(loaded) is None  # not the bytes the ledger came from
    count = _Counting(monkeypatch)
    verify_loaded(loaded)
    assert count.calls == 1


def test_not_a_snapshot_file_gives_no_shortcut():
    assert content_sha256_of_bytes(b"steelyard = 1\n") is None
    assert content_sha256_of_bytes(b"steelyard = 1\n\n[snapshot]\nformat = [\n") is None  # broken tail


def test_opening_hashes_the_file_and_its_content_in_one_pass(snap):
    """The hashes taken while opening equal hashlib's over the whole file and over the content bytes."""
    data = snap.read_bytes()
    loaded = open_ledger(snap)
    assert loaded.sha256 == hashlib.sha256(data).hexdigest()
    assert loaded.content_sha256 == _reference_sha(data)
    assert file_hashes(data) == (hashlib.sha256(data).hexdigest(), _reference_sha(data))


def test_file_hashes_of_other_files_give_no_content_hash(tmp_path):
    plain = (ROOT / "fixtures" / "trainer.toml").read_bytes()
    assert file_hashes(plain) == (hashlib.sha256(plain).hexdigest(), None)
    assert open_ledger(ROOT / "fixtures" / "trainer.toml").content_sha256 is None
    # a [snapshot] header followed by more than that table: no shortcut (docs/format.md)
    odd = b"steelyard = 1\n\n[snapshot]\nloadout = \"a\"\n\n[units]\nmass = \"kg\"\n"
    assert file_hashes(odd) == (hashlib.sha256(odd).hexdigest(), None)


def test_a_snapshot_edited_after_opening_is_judged_on_the_bytes_read(snap, monkeypatch):
    """The content hash of the bytes the ledger came from; a later change on disk does not enter."""
    loaded = open_ledger(snap)
    snap.write_bytes(snap.read_bytes().replace(b"steelyard = 1", b"steelyard = 1\n# changed later", 1))
    count = _Counting(monkeypatch)
    verify_loaded(loaded)
    assert count.calls == 0


def test_the_snapshot_table_name_is_the_diffs():
    from steelyard.core.history.diff import SNAPSHOT_TABLE as in_diff
    from steelyard.io.ledger.snapshot_bytes import SNAPSHOT_TABLE

    assert SNAPSHOT_TABLE == in_diff
