"""The journal of unsaved edits (io/journal.py).

References: the edits themselves are made with the core model's own
operations (Ledger.with_item / without_item / evolve) and the journal must
reproduce them exactly; the file format is checked with the standard
library's json, zlib.crc32 and hashlib.sha256.
"""

from __future__ import annotations

import datetime as dt
import hashlib
import json
import os
import random
import re
import signal
import subprocess
import sys
import textwrap
import time
import zlib
from dataclasses import replace
from pathlib import Path

import pytest

from steelyard.core.errors import SteelyardError
from steelyard.core.document.model import Amount, Envelope, Frame, Item, Loadout
import steelyard.io.durability.journal as J
from steelyard.io.ledger.file import open_ledger, save_ledger
from steelyard.io.ledger.write import ledger_to_toml

FIXTURES = Path(__file__).resolve().parents[1] / "fixtures"


@pytest.fixture
def ledger_file(tmp_path):
    path = tmp_path / "trainer.toml"
    path.write_bytes((FIXTURES / "trainer.toml").read_bytes())
    return path


def _strip_item(loadouts, item_id):
    """Loadouts without amounts for item_id (what deleting an item does to them)."""
    return tuple(replace(lo, set={k: v for k, v in lo.set.items() if k != item_id})
                 for lo in loadouts)


def _same(a, b):
    """Equal ledgers, including the order of items, loadouts and loadout amounts (canonical text)."""
    return a == b and ledger_to_toml(a) == ledger_to_toml(b)


def test_append_and_replay_round_trip(ledger_file):
    loaded = open_ledger(ledger_file)
    led = loaded.ledger
    radio = Item("radio-2", 1.0432624, (3.6068, 0.0, 0.9), name="Radio 2", group="avionics/com")
    first = led.items[0]
    lo = led.loadouts[0]
    victim = next(iter(lo.set))
    steps = [
        (J.item_record(first.evolve(mass=first.mass + 0.5)), lambda x: x.with_item(first.evolve(mass=first.mass + 0.5))),
        (J.item_record(radio), lambda x: x.with_item(radio)),
        (J.delete_record(victim), lambda x: x.without_item(victim).evolve(loadouts=_strip_item(x.loadouts, victim))),
        (J.amount_record(lo.name, "radio-2", None), lambda x: x),  # not named: stays empty
        (J.item_record(radio.evolve(cg=(3.7, 0.0, 0.9))), lambda x: x.with_item(radio.evolve(cg=(3.7, 0.0, 0.9)))),
    ]
    expected = led
    with J.Journal.open(ledger_file, loaded.sha256) as journal:
        for record, edit in steps:
            journal.append(record)
            expected = edit(expected)
        state = J.pending(ledger_file)
        assert state is not None and state.in_use and state.matches
        assert state.base_sha256 == hashlib.sha256(ledger_file.read_bytes()).hexdigest()
        assert len(state.records) == len(steps)
        assert _same(J.replay(led, state.records), expected)
        assert J.replay(led, state.records) is not led and led == open_ledger(ledger_file).ledger  # pure
    # Lines of JSON, each with its own CRC-32 (zlib) over the line without the crc field.
    lines = J.journal_path(ledger_file).read_bytes().splitlines() if J.journal_path(ledger_file).exists() else []
    assert len(lines) == 1 + len(steps)
    for line in lines:
        obj = json.loads(line)
        body = re.sub(rb',"crc":"[0-9a-f]{8}"\}$', b"}", line)
        assert int(obj["crc"], 16) == zlib.crc32(body)
    assert json.loads(lines[0])["base_sha256"] == loaded.sha256


def _edits(led, rng: random.Random):
    """A random edit made with the core model's own operations (the reference)."""
    items = led.items
    k = rng.randrange(9)
    it = items[rng.randrange(len(items))] if items else None
    if k == 0 or it is None:
        new = Item(f"new-{rng.randrange(10**6)}", rng.uniform(0, 10), (rng.uniform(-3, 3), 0.0, 1.0),
                   name=rng.choice(["", "Näme 表", "tab\there"]), quantity=rng.randint(1, 3))
        return led.with_item(new)
    if k == 1:
        return led.without_item(it.id).evolve(loadouts=_strip_item(led.loadouts, it.id))
    if k == 2:
        return led.with_item(it.evolve(mass=rng.uniform(0, 100), group="g/" + str(rng.randrange(5))))
    if k == 3:  # rename in place; loadout amounts follow the new id, in place
        new_id = it.id + "-r"
        i = led.index[it.id]
        los = tuple(replace(lo, set={(new_id if a == it.id else a): v for a, v in lo.set.items()})
                    for lo in led.loadouts)
        return led.evolve(items=items[:i] + (it.evolve(id=new_id),) + items[i + 1:], loadouts=los)
    if k == 4:  # move an item to another row
        rest = [x for x in items if x is not it]
        rest.insert(rng.randrange(len(rest) + 1), it)
        return led.evolve(items=tuple(rest))
    if k == 5 and led.loadouts:
        lo = rng.choice(led.loadouts)
        var = [x.id for x in items if x.variable] or [it.id]
        amounts = dict(lo.set)
        key = rng.choice(var)
        if key in amounts and rng.random() < 0.5:
            del amounts[key]
        else:
            amounts[key] = Amount("fraction", rng.random())
        return led.evolve(loadouts=tuple(replace(x, set=amounts) if x is lo else x
                                         for x in led.loadouts))
    if k == 6:
        user = dict(led.user or {})
        user["review"] = {"when": dt.datetime(2024, 5, rng.randint(1, 28), 10, 0, tzinfo=dt.timezone.utc),
                           "$t": "looks like a tag", "n": rng.randrange(9)}
        los = led.loadouts + (Loadout(f"lo-{rng.randrange(10**6)}", {}, None),) if rng.random() < 0.5 else \
            led.loadouts[1:]
        return led.evolve(user=user, loadouts=los)
    if k == 7:
        env = Envelope("e", "x", ((3.0, 300.0), (3.0, 600.0), (3.3, 600.0), (3.3, rng.uniform(200, 400))))
        return led.evolve(envelopes=(env,), frame=Frame("fwd", "right", "down") if rng.random() < 0.3 else led.frame)
    shuffled = list(items)
    rng.shuffle(shuffled)  # many rows at once: one splice
    return led.evolve(items=tuple(x.evolve(mass=x.mass * 2) for x in shuffled))


def test_edit_records_reproduce_every_kind_of_edit(ledger_file):
    base = open_ledger(ledger_file).ledger
    rng = random.Random(7)
    for _ in range(40):
        old = base
        records = []
        for _ in range(rng.randint(1, 8)):
            new = _edits(old, rng)
            rec = J.edit_record(old, new, change={"summary": "edit", "when": dt.datetime(2024, 1, 1)})
            if rec is None:
                assert _same(old, new)
                continue
            rec = J.decode_line(J.encode_line(rec)[:-1])  # through the file format and back
            assert _same(J.replay(old, [rec]), new)
            records.append(rec)
            old = new
        assert _same(J.replay(base, records), old)


def test_small_edits_make_small_records(ledger_file):
    led = open_ledger(ledger_file).ledger
    it = led.items[10]
    rec = J.edit_record(led, led.with_item(it.evolve(mass=1.0)))
    assert rec["op"] == "item" and rec["item"]["id"] == it.id and "at" not in rec
    assert J.edit_record(led, led) is None


def _journal_some(path: Path, n: int) -> list[dict]:
    loaded = open_ledger(path)
    first = loaded.ledger.items[0]
    records = [J.item_record(first.evolve(mass=float(k))) for k in range(1, n + 1)]
    with J.Journal.open(path, loaded.sha256) as journal:
        for r in records:
            journal.append(r)
        journal.unsaved = 1  # keep the file on close (a crash keeps it too)
    return records


def test_torn_last_line_is_ignored(ledger_file):
    _journal_some(ledger_file, 5)
    jpath = J.journal_path(ledger_file)
    full = jpath.read_bytes()
    last_start = full.rstrip(b"\n").rfind(b"\n") + 1
    for cut in range(last_start, len(full)):
        jpath.write_bytes(full[:cut])
        state = J.pending(ledger_file)
        assert len(state.records) == 4 and [r["seq"] for r in state.records] == [1, 2, 3, 4]
        assert state.torn == (cut > last_start) and state.ignored_lines == (1 if cut > last_start else 0)
    # Continuing after a torn tail: the partial line is cut off, new records follow the good ones.
    jpath.write_bytes(full[:len(full) - 7])
    loaded = open_ledger(ledger_file)
    with pytest.raises(J.JournalConflict):
        J.Journal.open(ledger_file, loaded.sha256)  # not without deciding about the waiting edits
    with J.Journal.open(ledger_file, loaded.sha256, resume=True) as journal:
        journal.append(J.delete_record(loaded.ledger.items[1].id))
        state = J.pending(ledger_file)
    assert [r["seq"] for r in state.records] == [1, 2, 3, 4, 5] and not state.torn
    assert state.records[-1]["op"] == "delete"


def test_damaged_line_stops_the_journal_there(ledger_file):
    _journal_some(ledger_file, 6)
    jpath = J.journal_path(ledger_file)
    lines = jpath.read_bytes().split(b"\n")
    lines[3] = lines[3].replace(b'"mass":3.0', b'"mass":9.0')  # record 3: content changed, CRC now wrong
    jpath.write_bytes(b"\n".join(lines))
    state = J.pending(ledger_file)
    assert [r["seq"] for r in state.records] == [1, 2] and state.ignored_lines == 4 and not state.torn


def test_journal_of_another_version_is_reported(ledger_file):
    original = ledger_file.read_bytes()
    _journal_some(ledger_file, 3)
    loaded = open_ledger(ledger_file)
    save_ledger(ledger_file, loaded.ledger.with_item(loaded.ledger.items[2].evolve(mass=5.0)))
    state = J.pending(ledger_file)
    assert not state.matches
    assert state.base_sha256 == hashlib.sha256(original).hexdigest()  # what editing began from
    assert state.current_sha256 == hashlib.sha256(ledger_file.read_bytes()).hexdigest()
    with pytest.raises(J.JournalConflict) as err:
        J.Journal.open(ledger_file, state.current_sha256, resume=True)
    assert len(str(err.value).splitlines()) == 1 and "3 unsaved edit" in str(err.value)
    # Restoring onto the file as it is now: replay, start a new journal, journal the result as one edit.
    restored = J.replay(open_ledger(ledger_file).ledger, state.records)
    J.discard(ledger_file)
    with J.Journal.open(ledger_file, state.current_sha256) as journal:
        journal.record(open_ledger(ledger_file).ledger, restored, change={"summary": "restored 3 edits"})
        again = J.pending(ledger_file)
    assert again.matches and _same(J.replay(open_ledger(ledger_file).ledger, again.records), restored)
    assert again.describe() == ["restored 3 edits"]


def test_lock_of_the_journal_and_its_life_cycle(ledger_file):
    loaded = open_ledger(ledger_file)
    first = loaded.ledger.items[0]
    journal = J.Journal.open(ledger_file, loaded.sha256)
    with pytest.raises(J.JournalInUse):
        J.Journal.open(ledger_file, loaded.sha256)  # a second writer, even in this process
    with pytest.raises(J.JournalInUse):
        J.discard(ledger_file)
    assert J.pending(ledger_file) is None  # header only: nothing to restore
    journal.append(J.item_record(first.evolve(mass=2.0)))
    assert J.pending(ledger_file).in_use
    record = save_ledger(ledger_file, J.replay(loaded.ledger, J.pending(ledger_file).records), loaded=loaded)
    journal.saved(record.sha256)
    assert J.pending(ledger_file) is None and journal.base_sha256 == record.sha256
    journal.append(J.item_record(first.evolve(mass=3.0)))
    journal.close()  # unsaved edits: kept for the next session
    state = J.pending(ledger_file)
    assert not state.in_use and state.matches and len(state.records) == 1 and state.pid == os.getpid()
    with pytest.raises(J.JournalConflict):
        J.Journal.open(ledger_file, record.sha256)
    again = J.Journal.open(ledger_file, record.sha256, resume=True)  # the edits were restored: carry on
    assert again.unsaved == 1
    again.close(discard=True)
    assert not J.journal_path(ledger_file).exists() and J.pending(ledger_file) is None
    with J.Journal.open(ledger_file, record.sha256):
        pass  # no edits: the journal removes itself
    assert not J.journal_path(ledger_file).exists()
    _journal_some(ledger_file, 2)
    assert J.discard(ledger_file) and not J.discard(ledger_file)


def test_journal_is_as_private_as_the_ledger(ledger_file):
    os.chmod(ledger_file, 0o600)
    loaded = open_ledger(ledger_file)
    with J.Journal.open(ledger_file, loaded.sha256) as journal:
        assert J.journal_path(ledger_file).name == ".trainer.toml.steelyard-journal"
        assert (os.stat(journal.path).st_mode & 0o777) == 0o600


def test_bad_records_raise_one_line_errors(ledger_file):
    led = open_ledger(ledger_file).ledger
    for rec, words in [({"seq": 4, "op": "delete", "id": "no\nsuch"}, "journal record 4"),
                       ({"op": "teleport"}, "unknown operation"),
                       ({"op": "item", "item": {"id": "x", "mass": float("nan"), "cg": [0, 0, 0]}}, "finite"),
                       ({"op": "item", "item": {"id": "x"}}, "cannot be applied"),
                       ({"op": "splice", "start": 5, "stop": 2, "items": []}, "outside")]:
        with pytest.raises(SteelyardError) as err:
            J.replay(led, [rec])
        assert words in str(err.value) and len(str(err.value).splitlines()) == 1


def test_describe_is_one_safe_line(ledger_file):
    led = open_ledger(ledger_file).ledger
    evil = led.items[0].evolve(name="\x1b[2J[b]boom[/b]\nnext line" + "x" * 10_000)
    text = J.describe(J.edit_record(led, led.with_item(evil)))
    assert len(text.splitlines()) == 1 and "\x1b" not in text and len(text) < 300


# ------------------------------------------------------------ kill the writer
def _planned(led, k: int) -> Item:
    """Edit k of the writer below: a mass change, sometimes with a long name (a long write)."""
    it = led.items[k % len(led.items)]
    return it.evolve(mass=float(k), name=("n" * 300_000 if k % 5 == 0 else f"edit {k}"))


def _writer(path: Path, sha: str, ack_w: int) -> None:  # pragma: no cover - runs in the child
    try:
        led = open_ledger(path).ledger
        journal = J.Journal.open(path, sha)
        k = 1
        while True:
            journal.append(J.item_record(_planned(led, k)))
            os.write(ack_w, k.to_bytes(4, "big"))  # acknowledged: this append has returned
            k += 1
    finally:
        os._exit(0)


def _check_after_kill(path: Path, led, acked: int) -> int:
    state = J.pending(path)
    got = 0 if state is None else len(state.records)
    assert acked <= got <= acked + 1, (acked, got)  # every returned append is on disk; one may be extra
    expected = led
    for k in range(1, got + 1):
        expected = expected.with_item(_planned(led, k))  # the reference: the core model's own edit
    if got:
        assert not state.in_use
        assert _same(J.replay(led, state.records), expected)
    J.discard(path)
    return got


@pytest.mark.slow  # 40 SIGKILLs of a journaling process
@pytest.mark.usefixtures("alone_on_the_disk")  # an fsync storm: never beside the tmux tests
def test_sigkill_mid_appends_keeps_every_complete_record(ledger_file):
    loaded = open_ledger(ledger_file)
    rng = random.Random(11)
    for _ in range(40):
        ack_r, ack_w = os.pipe()
        pid = os.fork()
        if pid == 0:  # pragma: no cover
            os.close(ack_r)
            _writer(ledger_file, loaded.sha256, ack_w)
        os.close(ack_w)
        time.sleep(rng.uniform(0.005, 0.06))
        os.kill(pid, signal.SIGKILL)
        os.waitpid(pid, 0)
        acks = b""
        while chunk := os.read(ack_r, 65536):
            acks += chunk
        os.close(ack_r)
        acked = int.from_bytes(acks[-4:], "big") if acks else 0
        _check_after_kill(ledger_file, loaded.ledger, acked)


_CHILD = textwrap.dedent("""
    import signal
    import sys
    # an editor in a live terminal session ends on SIGHUP; a test run under nohup
    # would hand this child an ignored SIGHUP and the kill would never land
    signal.signal(signal.SIGHUP, signal.SIG_DFL)
    import steelyard.io.durability.journal as J
    from steelyard.io.ledger.file import open_ledger
    path, sha = sys.argv[1], sys.argv[2]
    led = open_ledger(path).ledger
    j = J.Journal.open(path, sha)
    k = 1
    while True:
        it = led.items[k % len(led.items)]
        j.append(J.item_record(it.evolve(mass=float(k), name=("n" * 300_000 if k % 5 == 0 else f"edit {k}"))))
        print(k, flush=True)
        k += 1
""")


@pytest.mark.parametrize("sig", [signal.SIGKILL, signal.SIGHUP], ids=["SIGKILL", "SIGHUP"])
def test_killed_editor_process_loses_no_acknowledged_edit(ledger_file, sig):
    """A separate interpreter journaling edits, killed (SIGHUP: what a dropped SSH session sends)."""
    loaded = open_ledger(ledger_file)
    proc = subprocess.Popen([sys.executable, "-c", _CHILD, str(ledger_file), loaded.sha256],
                            stdout=subprocess.PIPE, text=True)
    acked = 0
    for line in proc.stdout:
        acked = int(line)
        if acked >= 25:
            break
    proc.send_signal(sig)
    proc.wait(timeout=30)
    acked = max([acked] + [int(x) for x in proc.stdout.read().split()])
    assert proc.returncode == -sig
    assert _check_after_kill(ledger_file, loaded.ledger, acked) >= 25
