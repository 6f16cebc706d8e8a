"""Atomic saves under fire: SIGKILL a saving process at random moments.

A forked child saves a large ledger over and over, alternating two different
versions, and is killed with SIGKILL after a random delay; 240 rounds. After
every kill the file must be byte-for-byte one complete version (compared with
the bytes the canonical writer gives for each, both of which load), and every
eighth round it is loaded again. The ledger has 3,000 items (about 0.45 MB),
from tests/perf/make_ledger.py.

A third of the rounds save through `save_ledger` (serialise, then write), the
rest call `write_atomic` with ready bytes, so most kills land inside the
write, the fsync and the rename; the test also checks that many kills landed
after a completed rename and many in the middle of a write. A killed save may
leave its temporary file behind (".<name>.<random>.tmp"); such files must be
harmless: the ledger still loads and a later save works beside them.
"""

from __future__ import annotations

import importlib.util
import os
import random
import re
import signal
import time
from pathlib import Path

import pytest

from steelyard.io.durability.atomic import write_atomic
from steelyard.io.ledger.file import open_ledger, save_ledger
from steelyard.io.ledger.read import ledger_from_data
from steelyard.io.ledger.write import ledger_to_toml
from steelyard.io.ledger.toml_read import parse_toml

ITEMS = 3000
ROUNDS = 240

_spec = importlib.util.spec_from_file_location("_make_ledger", Path(__file__).parent / "perf" / "make_ledger.py")
_make = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(_make)

def _ledger(seed: int):
    text = _make.ledger_text(ITEMS, seed)
    return ledger_from_data(parse_toml(text, source="gen"), source="gen")


def _child(path: Path, mode: str, versions, start: int, ready_w: int) -> None:
    """Save forever, alternating versions, until killed. Never returns."""
    try:
        os.write(ready_w, b"r")
        k = start
        while True:
            if mode == "save":
                save_ledger(path, versions[k % 2][0])
            else:
                write_atomic(path, versions[k % 2][1])
            k += 1
    finally:
        os._exit(0)


def _save_time(path: Path, versions, mode: str) -> float:
    t = time.perf_counter()
    for k in range(4):
        if mode == "save":
            save_ledger(path, versions[k % 2][0])
        else:
            write_atomic(path, versions[k % 2][1])
    return (time.perf_counter() - t) / 4


@pytest.mark.slow  # 240 SIGKILLs of a process saving a 0.45 MB ledger
@pytest.mark.usefixtures("alone_on_the_disk")  # an fsync storm: never beside the tmux tests
def test_sigkill_during_saves_leaves_old_or_new_file(tmp_path):
    a, b = _ledger(1), _ledger(2)
    versions = [(a, ledger_to_toml(a).encode("utf-8")), (b, ledger_to_toml(b).encode("utf-8"))]
    assert versions[0][1] != versions[1][1] and len(versions[0][1]) > 400_000
    for ledger, data in versions:  # each version loads from its bytes
        path0 = tmp_path / "check.toml"
        path0.write_bytes(data)
        assert open_ledger(path0).ledger.items == ledger.items
        path0.unlink()
    path = tmp_path / "ledger.toml"
    per_save = {m: _save_time(path, versions, m) for m in ("save", "write")}
    path.write_bytes(versions[0][1])
    current = 0
    rng = random.Random(20240501)
    flips = leftovers = 0
    temp_name = re.compile(r"^\.ledger\.toml\..+\.tmp$")
    for n in range(ROUNDS):
        mode = "save" if n % 3 == 0 else "write"
        ready_r, ready_w = os.pipe()
        pid = os.fork()
        if pid == 0:  # pragma: no cover - the child
            os.close(ready_r)
            _child(path, mode, versions, current + 1, ready_w)
        os.close(ready_w)
        assert os.read(ready_r, 1) == b"r"
        os.close(ready_r)
        time.sleep(rng.uniform(0.0, (2.0 if mode == "save" else 4.0) * per_save[mode]))
        os.kill(pid, signal.SIGKILL)
        _, status = os.waitpid(pid, 0)
        assert os.WIFSIGNALED(status) and os.WTERMSIG(status) == signal.SIGKILL
        data = path.read_bytes()
        assert data in (versions[0][1], versions[1][1]), f"round {n}: torn file of {len(data)} bytes"
        now = 0 if data == versions[0][1] else 1
        if n % 8 == 0:
            assert open_ledger(path).ledger.items == versions[now][0].items
        flips += now != current
        current = now
        temps = [p for p in tmp_path.iterdir() if p.name != "ledger.toml"]
        assert all(temp_name.match(p.name) for p in temps), [p.name for p in temps]
        leftovers += len(temps)
        if n < ROUNDS - 1:
            for p in temps:
                p.unlink()
    # The kills landed both after completed renames and in the middle of writes.
    assert flips >= 40, flips  # about 100 in practice
    assert leftovers >= 20, leftovers  # about 60 in practice
    # Left-over temporary files are harmless: the file loads, and a later save works beside them.
    left = sorted(p.name for p in tmp_path.iterdir() if p.name != "ledger.toml")
    save_ledger(path, versions[1 - current][0])
    assert path.read_bytes() == versions[1 - current][1]
    assert open_ledger(path).ledger.items == versions[1 - current][0].items
    assert set(left) <= {p.name for p in tmp_path.iterdir()}  # neither load nor save touched them
