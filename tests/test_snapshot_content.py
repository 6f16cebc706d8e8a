"""A snapshot's hash: the quick content text is the writer's text, and any change to a snapshot is caught.

Outside references: hashlib's SHA-256 of the snapshot file's own bytes before
the blank line that precedes `[snapshot]` (what docs/format.md says the hash
covers), and tomllib (a TOML v1.0.0 reader) for where each value sits in the
file. The quick text is also compared byte for byte with the general writer
on fixtures and on generated ledgers of every table (tests/test_round_trip.py).
"""

from __future__ import annotations

import datetime as dt
import hashlib
import re
import sys
import tomllib
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from steelyard.io.ledger.file import load_ledger
from steelyard.io.ledger.read import ledger_from_data
from steelyard.io.ledger.snapshot import SnapshotMismatch, as_carried, content_text, snapshot_text, verify_snapshot
from steelyard.io.ledger.write import ledger_to_toml
from steelyard.core.errors import SteelyardError
from test_round_trip import documents_in_any_order

ROOT = Path(__file__).resolve().parents[1]
FIXTURES = sorted((ROOT / "fixtures").glob("*.toml"))
TAKEN = dt.datetime(2026, 1, 1, tzinfo=dt.timezone.utc)
SETTINGS = dict(max_examples=40, deadline=None, suppress_health_check=list(HealthCheck))

sys.path.insert(0, str(ROOT / "tests" / "perf"))
from make_ledger import ledger_text  # noqa: E402


def _snapshot(ledger, loadout) -> str:
    return snapshot_text(ledger, loadout, source="src.toml", author="tester", taken=TAKEN)


def _hashed_bytes(snap: str) -> bytes:
    """The file's bytes before the blank line that precedes [snapshot] (docs/format.md)."""
    return snap[:snap.index("\n\n[snapshot]\n") + 1].encode("utf-8")


def _loadouts(ledger):
    return [None] + [lo.name for lo in ledger.loadouts]


@pytest.mark.parametrize("path", FIXTURES, ids=lambda p: p.name)
def test_quick_text_is_the_writers_text_on_fixtures_and_their_snapshots(path):
    ledger = load_ledger(path)
    assert content_text(ledger) == ledger_to_toml(ledger, snapshot=False)  # a file in its own units
    for loadout in _loadouts(ledger):
        snap = _snapshot(ledger, loadout)
        read = ledger_from_data(tomllib.loads(snap), source="snap.toml")
        body = _hashed_bytes(snap)
        assert content_text(read).encode("utf-8") == body
        # SHA-256 of the file's own bytes (hashlib) is the recorded hash
        assert tomllib.loads(snap)["snapshot"]["content_sha256"] == hashlib.sha256(body).hexdigest()
        assert content_text(as_carried(ledger, loadout)) == ledger_to_toml(as_carried(ledger, loadout),
                                                                            snapshot=False)


def test_quick_text_on_a_generated_ledger_and_its_snapshot():
    ledger = ledger_from_data(tomllib.loads(ledger_text(1500, seed=3)), source="big.toml")
    for loadout in (None, "partial"):
        snap = _snapshot(ledger, loadout)
        read = ledger_from_data(tomllib.loads(snap), source="snap.toml")
        assert content_text(read) == ledger_to_toml(read, snapshot=False)
        assert hashlib.sha256(content_text(read).encode()).hexdigest() == hashlib.sha256(
            _hashed_bytes(snap)).hexdigest()
        verify_snapshot(read, file="snap.toml")


@settings(**SETTINGS)
@given(documents_in_any_order(), st.sampled_from([None, "full", "light"]))
def test_quick_text_equals_the_writer_on_every_table(case, loadout):
    _, text = case
    ledger = ledger_from_data(tomllib.loads(text), source="in.toml")
    assert content_text(ledger) == ledger_to_toml(ledger, snapshot=False)
    snap = _snapshot(ledger, loadout)
    read = ledger_from_data(tomllib.loads(snap), source="snap.toml")
    assert content_text(read).encode("utf-8") == _hashed_bytes(snap)  # hashlib's input: the file's bytes


# --------------------------------------------------------------------------- any change is caught

_SNAP = None


def _base_snapshot() -> str:
    global _SNAP
    if _SNAP is None:
        ledger = load_ledger(ROOT / "fixtures" / "trainer.toml")
        _SNAP = _snapshot(ledger, "takeoff")
    return _SNAP


def _verify_text(text: str) -> None:
    verify_snapshot(ledger_from_data(tomllib.loads(text), source="t.toml"), file="t.toml")


_NUMBER = re.compile(r"(?<![\w.])-?\d+\.\d+(?:e[-+]?\d+)?")
_STRING = re.compile(r'"([^"\\]+)"')


@settings(max_examples=150, deadline=None, suppress_health_check=list(HealthCheck))
@given(st.data())
def test_any_changed_number_or_string_in_the_content_fails_verify(data):
    snap = _base_snapshot()
    body_end = snap.index("\n\n[snapshot]\n")
    kind = data.draw(st.sampled_from(["number", "string"]))
    spots = [m for m in (_NUMBER if kind == "number" else _STRING).finditer(snap, 0, body_end)]
    m = data.draw(st.sampled_from(spots))
    if kind == "number":
        old = float(m.group())
        new = repr(data.draw(st.floats(allow_nan=False, allow_infinity=False).filter(lambda v: v != old)))
        start, end = m.span()
    else:
        new = data.draw(st.text(st.characters(min_codepoint=0x20, max_codepoint=0x7e,
                                              blacklist_characters='"\\'), min_size=1, max_size=8)
                        .filter(lambda s: s != m.group(1)))
        start, end = m.span(1)
    changed = snap[:start] + new + snap[end:]
    assert tomllib.loads(changed) != tomllib.loads(snap)  # the value really differs (tomllib)
    with pytest.raises(SteelyardError):  # a mismatch, or a file no longer valid as a ledger
        _verify_text(changed)


@pytest.mark.parametrize("edit", [
    lambda t: t.replace("\n\n[snapshot]\n", '\n\n[[item]]\nid = "extra"\nmass = 1.0\ncg = [0.0, 0.0, 0.0]\n'
                                            "\n[snapshot]\n", 1),  # an item added
    lambda t: re.sub(r"\n\[\[item\]\]\n(?:[^\n]+\n)+", "\n", t, count=1),  # an item removed
    lambda t: t.replace("\n\n[snapshot]\n", '\n\n[user]\nnote = "x"\n\n[snapshot]\n', 1),  # a table added
    lambda t: re.sub(r'(\[\[item\]\]\nid = "[^"]+"\n)', r'\1name = "renamed"\n', t, count=1)
    if '\nname = "' not in t.split("[[item]]", 2)[1] else t.replace('name = "', 'name = "x', 1),  # a key
    lambda t: t.replace('[frame]\nx = "aft"', '[frame]\nx = "fwd"', 1),  # the frame
])
def test_changed_tables_keys_and_ids_fail_verify(edit):
    snap = _base_snapshot()
    changed = edit(snap)
    assert tomllib.loads(changed) != tomllib.loads(snap)
    with pytest.raises(SteelyardError):
        _verify_text(changed)


def test_a_changed_id_is_a_hash_mismatch():
    snap = _base_snapshot()
    m = re.search(r'^id = "([^"]+)"$', snap, re.M)
    changed = snap[:m.end(1)] + "-x" + snap[m.end(1):]
    with pytest.raises(SnapshotMismatch, match="does not match its hash"):
        _verify_text(changed)


def test_a_comment_or_blank_line_still_verifies():
    # the hash covers the canonical text of what the file means, as before: layout is not content
    snap = _base_snapshot()
    _verify_text("# kept for the audit\n" + snap.replace("\n[[item]]\n", "\n\n[[item]]\n", 1))
