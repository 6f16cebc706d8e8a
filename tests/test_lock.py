"""The ledger lock (io.lock) with real second processes.

Who "I" am is checked against the standard library directly (getpass,
socket, os), and liveness of a pid against the operating system: a child
process that has exited and been reaped no longer exists (POSIX kill(2) with
signal 0 reports ESRCH).
"""

from __future__ import annotations

import getpass
import json
import os
import socket
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from steelyard.core.errors import SteelyardError
import steelyard.io.durability.lock as lockmod
from steelyard.io.durability.lock import (Lock, LockInfo, Locked, acquire, is_stale, lock_path, read_lock, take_over,
                               who_am_i)

HOLDER = textwrap.dedent("""
    import sys
    from steelyard.io.durability.lock import acquire
    lock = acquire(sys.argv[1])
    print("held", flush=True)
    sys.stdin.readline()
    if sys.argv[2] == "release":
        lock.release()
    print("done", flush=True)
""")


@pytest.fixture
def ledger(tmp_path: Path) -> Path:
    p = tmp_path / "vehicle.toml"
    p.write_text("steelyard = 1\n")
    return p


def hold(ledger: Path, how: str = "release") -> subprocess.Popen:
    proc = subprocess.Popen([sys.executable, "-c", HOLDER, str(ledger), how], stdin=subprocess.PIPE,
                            stdout=subprocess.PIPE, text=True)
    assert proc.stdout.readline().strip() == "held"
    return proc


def finish(proc: subprocess.Popen) -> None:
    proc.stdin.write("\n")
    proc.stdin.flush()
    proc.communicate(timeout=30)


def dead_pid() -> int:
    """The pid of a process that ran, exited and was reaped."""
    proc = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True,
                          text=True, check=True)
    return int(proc.stdout)


def write_lock(ledger: Path, info: LockInfo) -> None:
    lock_path(ledger).write_text(json.dumps({"user": info.user, "host": info.host, "pid": info.pid,
                                             "since": info.since}))


def test_lock_file_sits_next_to_the_ledger_hidden(ledger):
    assert lock_path(ledger) == ledger.parent / ".vehicle.toml.steelyard.lock"
    with acquire(ledger) as lk:
        assert lk.path.exists()
        raw = json.loads(lk.path.read_text())
        # the holder, named from the standard library directly
        assert raw["user"] == getpass.getuser() and raw["host"] == socket.gethostname()
        assert raw["pid"] == os.getpid()
    assert not lock_path(ledger).exists()


def test_second_process_is_refused_with_the_holder_named(ledger):
    proc = hold(ledger)
    try:
        with pytest.raises(Locked) as e:
            acquire(ledger)
        info = e.value.info
        assert info.pid == proc.pid
        assert info.user == getpass.getuser() and info.host == socket.gethostname()
        msg = str(e.value)
        assert "\n" not in msg
        for part in (info.user, info.host, str(proc.pid), info.since, str(ledger)):
            assert part in msg
        assert not is_stale(info)  # its process is running
        assert read_lock(ledger) == info
    finally:
        finish(proc)
    # released by its holder: free again
    with acquire(ledger):
        pass


def test_symlinked_path_shares_the_lock(ledger, tmp_path):
    link = tmp_path / "alias.toml"
    link.symlink_to(ledger)
    proc = hold(link)
    try:
        with pytest.raises(Locked):
            acquire(ledger)
    finally:
        finish(proc)


def test_holder_that_died_leaves_a_stale_lock_that_can_be_taken_over(ledger):
    proc = hold(ledger, "keep")  # exits without releasing, like a dropped SSH session
    finish(proc)
    with pytest.raises(Locked) as e:
        acquire(ledger)
    info = e.value.info
    assert info.pid == proc.pid and is_stale(info)
    lk = take_over(ledger, info)
    assert lk.held and read_lock(ledger).pid == os.getpid()
    lk.release()
    assert not lock_path(ledger).exists()


def test_stale_lock_of_a_dead_pid(ledger):
    pid = dead_pid()
    with pytest.raises(ProcessLookupError):
        os.kill(pid, 0)  # the operating system agrees it is gone
    info = LockInfo("bo", socket.gethostname(), pid, "2026-05-04T09:12:33Z")
    write_lock(ledger, info)
    assert is_stale(info)
    with pytest.raises(Locked) as e:
        acquire(ledger)
    assert e.value.info == info and "bo" in str(e.value) and str(pid) in str(e.value)
    with take_over(ledger, info) as lk:
        assert lk.info.pid == os.getpid()
        assert read_lock(ledger) == lk.info
    assert not lock_path(ledger).exists()


def test_lock_from_another_host_is_never_stale_automatically(ledger):
    info = LockInfo("bo", "elsewhere.invalid", dead_pid(), "2026-05-04T09:12:33Z")
    write_lock(ledger, info)
    assert not is_stale(info)
    with pytest.raises(SteelyardError) as e:
        take_over(ledger, info)
    assert not isinstance(e.value, Locked) and "not stale" in str(e.value)
    assert read_lock(ledger) == info  # untouched
    with take_over(ledger, info, force=True) as lk:  # the user chose to
        assert lk.held


def test_take_over_refuses_when_the_lock_changed(ledger):
    old = LockInfo("bo", socket.gethostname(), dead_pid(), "2026-05-04T09:12:33Z")
    write_lock(ledger, old)
    newer = LockInfo("cy", socket.gethostname(), os.getppid(), "2026-05-04T10:00:00Z")
    write_lock(ledger, newer)  # someone else took it over first
    with pytest.raises(Locked) as e:
        take_over(ledger, old)
    assert e.value.info == newer
    assert read_lock(ledger) == newer


def test_take_over_of_a_lock_already_gone_just_acquires(ledger):
    info = LockInfo("bo", socket.gethostname(), dead_pid(), "2026-05-04T09:12:33Z")
    with take_over(ledger, info) as lk:
        assert lk.held


def test_release_removes_only_its_own_lock(ledger):
    mine = acquire(ledger)
    assert mine.held
    theirs = LockInfo("cy", socket.gethostname(), os.getppid(), "2026-05-04T10:00:00Z")
    write_lock(ledger, theirs)  # taken over behind our back
    assert not mine.held
    mine.release()
    assert read_lock(ledger) == theirs
    lock_path(ledger).unlink()
    again = acquire(ledger)
    again.release()
    again.release()  # twice is harmless
    assert not lock_path(ledger).exists()


def test_unreadable_lock_refuses_without_crashing(ledger, monkeypatch):
    monkeypatch.setattr(lockmod, "_READ_TRIES", 1)
    lock_path(ledger).write_bytes(b"\x00garbage")
    with pytest.raises(Locked) as e:
        acquire(ledger)
    assert e.value.info.user == "unknown" and not is_stale(e.value.info)


def test_racing_processes_get_exactly_one_lock(ledger):
    code = textwrap.dedent("""
        import sys, time
        from steelyard.io.durability.lock import acquire, Locked
        while time.time() < float(sys.argv[2]):
            pass
        try:
            lk = acquire(sys.argv[1])
            print("won", flush=True)
            time.sleep(1.0)
        except Locked:
            print("lost", flush=True)
    """)
    import time
    start = time.time() + 1.5
    procs = [subprocess.Popen([sys.executable, "-c", code, str(ledger), str(start)], stdout=subprocess.PIPE,
                              text=True) for _ in range(6)]
    outs = [p.communicate(timeout=60)[0].strip() for p in procs]
    assert sorted(outs) == ["lost"] * 5 + ["won"]


def test_who_am_i_falls_back(monkeypatch):
    assert who_am_i() == getpass.getuser()

    def broken():
        raise OSError("no login name")

    monkeypatch.setattr(lockmod.getpass, "getuser", broken)
    assert who_am_i() == "unknown"


def test_lock_object_is_a_context_manager(ledger):
    with acquire(ledger) as lk:
        assert isinstance(lk, Lock)
        with pytest.raises(Locked):
            acquire(ledger)  # the same process a second time is refused too
    with acquire(ledger):
        pass
