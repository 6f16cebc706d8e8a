"""Hostile file-system states around a ledger: planted links, FIFOs, devices, full disks, racing writers.

Each test plants what an attacker or an accident could leave beside a
ledger, runs what a user runs, and checks against POSIX semantics (open(2)
O_NOFOLLOW / O_EXCL / O_NONBLOCK, rename(2), setrlimit(2) RLIMIT_FSIZE with
EFBIG, stat(2) mode bits) that nothing outside the ledger's own files was
read without bound, written or removed, and that every refusal is one line.
"""

from __future__ import annotations

import errno
import getpass
import hashlib
import importlib.util
import os
import resource
import shutil
import signal
import socket
import stat
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

import steelyard.io.durability.journal as J
import steelyard.io.durability.lock as lockmod
from steelyard.core.errors import SteelyardError
from steelyard.io.durability.atomic import ChangedOnDisk, write_atomic
from steelyard.io.durability.lock import Locked, LockRefused, acquire, lock_path
from steelyard.io.ledger.file import open_ledger, rewriting, save_ledger

ROOT = Path(__file__).resolve().parents[1]
FIXTURES = ROOT / "fixtures"
TRAINER = FIXTURES / "trainer.toml"
WEIGHING = FIXTURES / "weighing-example.toml"
# a hang (a FIFO opened for reading waits for a writer, POSIX open(2)) must fail the test, not stop the run
HANG_GUARD = 300


def run(*args, cwd=None, preexec=None, env=None):
    return subprocess.run([sys.executable, "-m", "steelyard", *map(str, args)], capture_output=True, text=True,
                          cwd=cwd, preexec_fn=preexec, env=env, timeout=HANG_GUARD)


def digest(p: Path) -> str:
    return hashlib.sha256(p.read_bytes()).hexdigest()


def one_line(stderr: str) -> str:
    lines = stderr.strip().splitlines()
    assert len(lines) == 1, stderr
    assert "Traceback" not in stderr
    return lines[0]


def leftovers(folder: Path, keep) -> list[str]:
    return sorted(p.name for p in folder.iterdir() if p.name not in keep)


@pytest.fixture
def ledger(tmp_path) -> Path:
    p = tmp_path / "trainer.toml"
    shutil.copy(TRAINER, p)
    return p


@pytest.fixture
def precious(tmp_path) -> Path:
    """A file outside the ledger's business that a planted link points at."""
    p = tmp_path / "elsewhere" / "precious.txt"
    p.parent.mkdir()
    p.write_bytes(b"not yours to touch\n" * 50)
    return p


# ----------------------------------------------------------- finding 1: journal
def test_planted_journal_symlink_is_refused_and_its_target_untouched(ledger, precious):
    link = J.journal_path(ledger)
    link.symlink_to(precious)
    before = digest(precious)
    loaded = open_ledger(ledger)
    # the editor's sequence (docs/durability.md): pending, then Journal.open, then close
    with pytest.raises(SteelyardError) as e:
        J.pending(ledger, current_sha256=loaded.sha256)
    assert "symbolic link" in str(e.value) and "\n" not in str(e.value)
    with pytest.raises(SteelyardError):
        journal = J.Journal.open(ledger, loaded.sha256)
        journal.close()
    with pytest.raises(SteelyardError):
        J.discard(ledger)
    # POSIX open(2): O_NOFOLLOW fails with ELOOP on a link, and O_CREAT|O_EXCL fails with EEXIST on one,
    # so neither writes the target; unlink was never called, so the link is still there
    assert digest(precious) == before
    assert link.is_symlink() and os.readlink(link) == str(precious)


def test_dangling_journal_symlink_creates_nothing(ledger, tmp_path):
    link = J.journal_path(ledger)
    victim = tmp_path / "created-through-the-link"
    link.symlink_to(victim)
    with pytest.raises(SteelyardError):
        J.Journal.open(ledger, open_ledger(ledger).sha256)
    # POSIX open(2): with O_CREAT|O_EXCL a symbolic link at the name is not followed, even a dangling one
    assert not victim.exists() and link.is_symlink()


def test_journal_hard_linked_to_another_file_is_refused(ledger, precious):
    os.link(precious, J.journal_path(ledger))
    before = digest(precious)
    with pytest.raises(SteelyardError) as e:
        J.Journal.open(ledger, open_ledger(ledger).sha256)
    assert "hard link" in str(e.value)
    assert digest(precious) == before and os.stat(precious).st_nlink == 2  # stat(2): both names remain


def test_journal_fifo_does_not_hang_the_editor(ledger):
    os.mkfifo(J.journal_path(ledger))
    code = textwrap.dedent(f"""
        import sys
        import steelyard.io.durability.journal as J
        from steelyard.core.errors import SteelyardError
        for step in (lambda: J.pending({str(ledger)!r}), lambda: J.Journal.open({str(ledger)!r}, "0" * 64)):
            try:
                step()
            except SteelyardError as exc:
                print("refused:", exc)
            else:
                print("accepted")
    """)
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=HANG_GUARD)
    assert out.returncode == 0, out.stderr
    lines = out.stdout.splitlines()
    assert len(lines) == 2 and all(line.startswith("refused:") and "FIFO" in line for line in lines), out.stdout
    assert stat.S_ISFIFO(os.lstat(J.journal_path(ledger)).st_mode)  # left as it was


# -------------------------------------------------------------- finding 1: lock
def test_lock_linked_to_dev_zero_is_refused_without_reading_it(ledger):
    assert os.path.exists("/dev/zero"), "Linux null(4) provides /dev/zero; this test needs it"
    lock_path(ledger).symlink_to("/dev/zero")
    # in a child with 1 GiB of address space: reading /dev/zero without bound would end in MemoryError
    code = textwrap.dedent(f"""
        import resource
        resource.setrlimit(resource.RLIMIT_AS, (1 << 30, 1 << 30))
        from steelyard.io.durability.lock import LockRefused, acquire
        try:
            acquire({str(ledger)!r})
        except LockRefused as exc:
            print("refused:", exc)
    """)
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=HANG_GUARD)
    assert out.returncode == 0 and out.stdout.startswith("refused:"), out.stdout + out.stderr
    assert "symbolic link" in out.stdout and len(out.stdout.strip().splitlines()) == 1


def test_lock_fifo_does_not_hang_the_editor(ledger):
    os.mkfifo(lock_path(ledger))
    code = textwrap.dedent(f"""
        from steelyard.io.durability.lock import LockRefused, acquire
        try:
            acquire({str(ledger)!r})
        except LockRefused as exc:
            print("refused:", exc)
    """)
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=HANG_GUARD)
    assert out.returncode == 0 and out.stdout.startswith("refused:") and "FIFO" in out.stdout, out.stdout + out.stderr


def test_lock_symlink_to_a_real_lock_is_refused_and_never_removed(ledger, tmp_path):
    other = tmp_path / "other.toml"
    shutil.copy(TRAINER, other)
    real = acquire(other)  # a genuine lock file, reached through a planted link
    try:
        lock_path(ledger).symlink_to(real.path)
        with pytest.raises(LockRefused):
            acquire(ledger)
        assert real.held and lock_path(ledger).is_symlink()
    finally:
        real.release()


def test_a_huge_lock_file_is_read_only_a_little(ledger, monkeypatch):
    size = 8 << 20
    lock_path(ledger).write_bytes(b"{" * size)
    seen = []
    real_read = os.read

    def counting_read(fd, n):
        data = real_read(fd, n)
        seen.append(len(data))
        return data

    monkeypatch.setattr(lockmod.os, "read", counting_read)
    monkeypatch.setattr(lockmod, "_READ_TRIES", 1)
    with pytest.raises(Locked) as e:  # not a steelyard lock: held by "unknown", as an unreadable lock is
        acquire(ledger)
    assert e.value.info.user == "unknown"
    # a steelyard lock is one short JSON line per field (user, host, pid, since, token): a few hundred bytes;
    # reading a thousandth of the planted file is already far more than any lock needs (common practice)
    assert 0 < sum(seen) < size // 1000


# ----------------------------------------------------- finding 2: CLI writers
def test_import_into_a_ledger_the_editor_holds_is_refused_naming_the_holder(ledger, tmp_path):
    csv = tmp_path / "part.csv"
    csv.write_text("id,mass [lb],x [in],y [in],z [in]\nwing-l,101.5,138,-84,50\n")
    before = digest(ledger)
    with acquire(ledger):  # what the editor takes when it opens the file
        r = run("import", csv, "-o", ledger, "--into", ledger, "--force")
    assert r.returncode == 2
    line = one_line(r.stderr)
    # the holder is this test process: names from the C library and the kernel, not from the program
    assert getpass.getuser() in line and socket.gethostname() in line and str(os.getpid()) in line
    assert digest(ledger) == before


def test_weigh_apply_in_place_takes_the_lock_too(tmp_path):
    path = tmp_path / "w.toml"
    shutil.copy(WEIGHING, path)
    before = digest(path)
    with acquire(path):
        r = run("weigh", path, "--apply", "--force")
    assert r.returncode == 2 and str(os.getpid()) in one_line(r.stderr)
    assert digest(path) == before


def test_snapshot_over_a_ledger_open_in_the_editor_is_refused(ledger, tmp_path):
    other = tmp_path / "other.toml"
    shutil.copy(TRAINER, other)
    before = digest(other)
    with acquire(other):  # a snapshot is a ledger file: replacing one someone edits loses their work
        r = run("snapshot", ledger, "-o", other, "--force")
    assert r.returncode == 2 and str(os.getpid()) in one_line(r.stderr)
    assert digest(other) == before


def test_lock_of_a_killed_command_does_not_block_the_next(ledger, tmp_path):
    # a lock left by a process that no longer exists, with nothing unsaved: stale (same host, pid gone)
    child = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True,
                           text=True)
    dead = int(child.stdout)
    lock_path(ledger).write_text('{"program": "steelyard", "user": "x", "host": "%s", "pid": %d, '
                                 '"since": "2020-01-01T00:00:00Z", "token": "t"}\n' % (socket.gethostname(), dead))
    csv = tmp_path / "part.csv"
    csv.write_text("id,mass [lb],x [in],y [in],z [in]\nwing-l,101.5,138,-84,50\n")
    r = run("import", csv, "-o", ledger, "--into", ledger, "--force")
    assert r.returncode == 0, r.stderr
    assert not lock_path(ledger).exists()  # taken over, then released


def test_waiting_journal_edits_stop_a_command_writer(ledger, tmp_path):
    loaded = open_ledger(ledger)
    journal = J.Journal.open(ledger, loaded.sha256)
    journal.append(J.delete_record("wing-l"))
    os.close(journal._fd)  # a killed editor: the journal stays, with one unsaved edit
    journal._fd = None
    csv = tmp_path / "part.csv"
    csv.write_text("id,mass [lb],x [in],y [in],z [in]\nwing-r,99,138,84,50\n")
    before = digest(ledger)
    r = run("import", csv, "-o", ledger, "--into", ledger, "--force")
    assert r.returncode == 2 and "journal" in one_line(r.stderr)
    assert digest(ledger) == before and J.pending(ledger) is not None


def test_file_changed_by_another_program_while_a_command_works_is_not_overwritten(ledger):
    with rewriting(ledger, source=ledger, force=True) as out:
        loaded = open_ledger(ledger)
        out.replaces(loaded)
        text = ledger.read_text() + "\n# edited by hand meanwhile\n"
        ledger.write_text(text)  # a text editor ignores the lock (docs/durability.md)
        with pytest.raises(ChangedOnDisk):
            out.write("steelyard = 1\n")
    # rename(2) was never called: the other program's bytes stay, and no temporary file is left
    assert ledger.read_text() == text
    assert leftovers(ledger.parent, {ledger.name, "elsewhere"}) == []


def test_expected_hash_is_checked_after_the_new_bytes_are_written(tmp_path):
    p = tmp_path / "f.txt"
    p.write_bytes(b"old")
    old = hashlib.sha256(b"old").hexdigest()  # hashlib: FIPS 180-4 SHA-256
    p.write_bytes(b"theirs")
    with pytest.raises(ChangedOnDisk):
        write_atomic(p, b"mine", expect_sha256=old)
    assert p.read_bytes() == b"theirs" and leftovers(tmp_path, {"f.txt"}) == []
    write_atomic(p, b"mine", expect_sha256=hashlib.sha256(b"theirs").hexdigest())
    assert p.read_bytes() == b"mine"


def _make_ledger():
    spec = importlib.util.spec_from_file_location("_make_ledger", ROOT / "tests" / "perf" / "make_ledger.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


def test_two_imports_at_once_never_lose_an_edit_that_reported_success(tmp_path):
    path = tmp_path / "big.toml"
    _make_ledger().write_ledger(str(path), 20_000, seed=3)
    # each writer changes a different item; exit 0 promises that its change is in the file
    masses = {"p000001": "123.25", "p019999": "77.75"}
    procs = []
    for k, (item, mass) in enumerate(masses.items()):
        csv = tmp_path / f"w{k}.csv"
        csv.write_text(f"id,mass [lb],x [in],y [in],z [in]\n{item},{mass},100,0,10\n")
        procs.append(subprocess.Popen([sys.executable, "-m", "steelyard", "import", str(csv), "-o", str(path),
                                       "--into", str(path), "--force"], stdout=subprocess.PIPE,
                                      stderr=subprocess.PIPE, text=True))
    results = [(p.wait(timeout=HANG_GUARD * 2), p.stdout.read(), p.stderr.read()) for p in procs]
    for p in procs:
        p.stdout.close()
        p.stderr.close()
    final = open_ledger(path).ledger
    lb = 0.45359237  # NIST SP 811 B.8: 1 lb (avoirdupois) = 0.453 592 37 kg exactly
    for (code, _out, err), (item, mass) in zip(results, masses.items()):
        assert code in (0, 2), err
        if code == 0:
            assert final.item(item).mass == pytest.approx(float(mass) * lb, rel=1e-12), f"{item}: lost edit"
        else:
            one_line(err)
    assert any(code == 0 for code, _, _ in results)


# --------------------------------------------- finding 3: full disk, limits
def _fsize_limit(limit: int, ignore: bool = True):
    def pre():
        resource.setrlimit(resource.RLIMIT_FSIZE, (limit, limit))
        if ignore:
            signal.signal(signal.SIGXFSZ, signal.SIG_IGN)
    return pre


@pytest.mark.parametrize("command", ["report", "export", "snapshot", "import"])
def test_file_size_limit_is_one_line_exit_2_and_the_old_file_stays(command, tmp_path):
    shutil.copy(TRAINER, tmp_path / "t.toml")
    csv = tmp_path / "items.csv"
    assert run("export", "t.toml", "--csv", csv, cwd=tmp_path).returncode == 0
    out = {"report": "r.html", "export": "e.csv", "snapshot": "s.toml", "import": "i.toml"}[command]
    args = {"report": ["report", "t.toml", "-o", out], "export": ["export", "t.toml", "--csv", out],
            "snapshot": ["snapshot", "t.toml", "-o", out, "--force"],
            "import": ["import", csv.name, "-o", out, "--force"]}[command]
    old = b"old output, kept whole\n"
    (tmp_path / out).write_bytes(old)
    # setrlimit(2): a write past RLIMIT_FSIZE fails with EFBIG once SIGXFSZ is ignored; every output here is
    # larger than 4 KiB (the trainer fixture's report, CSV, snapshot and ledger all are)
    env = {**os.environ, "PYTHONDONTWRITEBYTECODE": "1"}
    r = run(*args, cwd=tmp_path, preexec=_fsize_limit(4096), env=env)
    assert r.returncode == 2, r.stderr
    assert one_line(r.stderr) == f"steelyard: {out}: cannot write: {os.strerror(errno.EFBIG)}"
    assert (tmp_path / out).read_bytes() == old
    assert [n for n in leftovers(tmp_path, set()) if n.endswith(".tmp") or n.endswith(".lock")] == []


def test_file_size_signal_is_handled_by_the_program_itself(tmp_path):
    shutil.copy(TRAINER, tmp_path / "t.toml")
    env = {**os.environ, "PYTHONDONTWRITEBYTECODE": "1"}
    # SIGXFSZ left at its default (terminate, POSIX signal.h): the program must ignore it and report EFBIG
    r = run("report", "t.toml", "-o", "r.md", cwd=tmp_path, preexec=_fsize_limit(4096, ignore=False), env=env)
    assert r.returncode == 2 and one_line(r.stderr).endswith(os.strerror(errno.EFBIG)), (r.returncode, r.stderr)


@pytest.mark.parametrize("args", [["report", "{L}", "-o", "{L}/r.md"], ["export", "{L}", "--csv", "{L}/e.csv"],
                                  ["snapshot", "{L}", "-o", "{L}/s.toml"],
                                  ["import", "{C}", "-o", "{L}/i.toml"]])
def test_output_under_a_regular_file_is_one_line_exit_2(args, tmp_path):
    shutil.copy(TRAINER, tmp_path / "t.toml")
    (tmp_path / "c.csv").write_text("id,mass [kg],x [m],y [m],z [m]\na,1,0,0,0\n")
    argv = [a.replace("{L}", "t.toml").replace("{C}", "c.csv") for a in args]
    before = digest(tmp_path / "t.toml")
    r = run(*argv, cwd=tmp_path)
    assert r.returncode == 2, r.stderr
    # open(2)/stat(2): a path component that is not a directory gives ENOTDIR
    assert one_line(r.stderr) == f"steelyard: {argv[-1]}: cannot write: {os.strerror(errno.ENOTDIR)}"
    assert digest(tmp_path / "t.toml") == before


def test_stdout_on_a_full_device_is_one_line_exit_2(tmp_path):
    assert os.path.exists("/dev/full"), "Linux null(4) provides /dev/full; this test needs it"
    with open("/dev/full", "w") as full:  # Linux null(4): every write to /dev/full fails with ENOSPC
        r = subprocess.run([sys.executable, "-m", "steelyard", "rollup", str(TRAINER), "--json"], stdout=full,
                           stderr=subprocess.PIPE, text=True, timeout=HANG_GUARD)
    assert r.returncode == 2
    assert one_line(r.stderr).endswith(os.strerror(errno.ENOSPC))


# ------------------------------------------------- finding 4: read-only ledger
def test_import_into_a_read_only_ledger_needs_force(ledger, tmp_path):
    csv = tmp_path / "part.csv"
    csv.write_text("id,mass [lb],x [in],y [in],z [in]\nwing-l,101.5,138,-84,50\n")
    # comments stripped: the file differs from the fixture, and only its mode matters here
    text = "\n".join(line for line in ledger.read_text().splitlines() if not line.lstrip().startswith("#"))
    ledger.write_text(text + "\n")
    ledger.chmod(0o444)  # writable by nobody (stat(2) mode bits); root would pass access(2) anyway
    before = digest(ledger)
    r = run("import", csv, "-o", ledger, "--into", ledger)
    assert r.returncode == 2
    line = one_line(r.stderr)
    assert "read-only" in line and "--force" in line
    assert digest(ledger) == before
    r = run("import", csv, "-o", ledger, "--into", ledger, "--force")
    assert r.returncode == 0, r.stderr
    assert digest(ledger) != before
    assert stat.S_IMODE(os.stat(ledger).st_mode) == 0o444  # the file's permission bits are kept


def test_weigh_apply_on_a_read_only_ledger_needs_force(tmp_path):
    path = tmp_path / "w.toml"
    shutil.copy(WEIGHING, path)
    path.chmod(0o400)  # writable by nobody, readable by its owner (stat(2) mode bits)
    before = digest(path)
    r = run("weigh", path, "--apply")
    assert r.returncode == 2 and "read-only" in one_line(r.stderr)
    assert digest(path) == before


def test_export_will_not_replace_a_read_only_output(ledger, tmp_path):
    out = tmp_path / "e.csv"
    out.write_text("kept\n")
    out.chmod(0o444)
    r = run("export", ledger, "--csv", out)
    assert r.returncode == 2 and "read-only" in one_line(r.stderr)
    assert out.read_text() == "kept\n"


# ----------------------------------------- finding 5: derived files and links
def test_report_chart_symlinked_onto_the_ledger_is_refused(ledger, tmp_path):
    (tmp_path / "r-envelope-normal.svg").symlink_to(ledger)
    before = digest(ledger)
    r = run("report", ledger, "-o", tmp_path / "r.md")
    assert r.returncode == 2 and "symbolic link" in one_line(r.stderr)
    assert digest(ledger) == before
    assert (tmp_path / "r-envelope-normal.svg").is_symlink()
    assert not (tmp_path / "r.md").exists() and not (tmp_path / "r-envelope-utility.svg").exists()  # nothing half-written


def test_report_chart_hard_linked_to_the_ledger_is_refused(ledger, tmp_path):
    os.link(ledger, tmp_path / "r-envelope-utility.svg")
    before = digest(ledger)
    r = run("report", ledger, "-o", tmp_path / "r.md")
    assert r.returncode == 2 and "input" in one_line(r.stderr)
    assert digest(ledger) == before and os.stat(ledger).st_nlink == 2


@pytest.mark.parametrize("command", ["report", "export", "snapshot"])
def test_symlink_planted_at_an_output_is_refused(command, ledger, precious, tmp_path):
    out = tmp_path / {"report": "r.html", "export": "e.json", "snapshot": "s.toml"}[command]
    out.symlink_to(precious)
    before = digest(precious)
    args = {"report": ["report", ledger, "-o", out], "export": ["export", ledger, "--json", out],
            "snapshot": ["snapshot", ledger, "-o", out, "--force"]}[command]
    r = run(*args)
    assert r.returncode == 2 and "symbolic link" in one_line(r.stderr)
    assert digest(precious) == before and out.is_symlink()


def test_import_output_symlink_is_refused(precious, tmp_path):
    csv = tmp_path / "c.csv"
    csv.write_text("id,mass [kg],x [m],y [m],z [m]\na,1,0,0,0\n")
    out = tmp_path / "new.toml"
    out.symlink_to(precious)
    before = digest(precious)
    r = run("import", csv, "-o", out, "--force")
    assert r.returncode == 2 and "symbolic link" in one_line(r.stderr)
    assert digest(precious) == before


def test_a_symlinked_ledger_is_rewritten_through_its_link(tmp_path):
    real = tmp_path / "store" / "w.toml"
    real.parent.mkdir()
    shutil.copy(WEIGHING, real)
    link = tmp_path / "w.toml"
    link.symlink_to(real)
    before = digest(real)
    r = run("weigh", link, "--apply", "--force")
    assert r.returncode == 0, r.stderr
    # the link is kept and its target replaced (rename(2) onto the resolved path), as editors save
    assert link.is_symlink() and os.readlink(link) == str(real)
    assert digest(real) != before
    assert leftovers(tmp_path, {"w.toml", "store"}) == [] and leftovers(real.parent, {"w.toml"}) == []


def test_editor_save_through_a_symlink_keeps_the_link(ledger, tmp_path):
    link = tmp_path / "alias.toml"
    link.symlink_to(ledger)
    loaded = open_ledger(link)
    save_ledger(link, loaded.ledger, loaded=loaded)
    assert link.is_symlink() and open_ledger(ledger).ledger.items == loaded.ledger.items


# ------------------------------------------------- finding 6: shared preamble
def test_errors_after_loading_name_the_file(tmp_path):
    bad = FIXTURES / "bad" / "loadout-unknown-item.toml"
    for command in (["check", bad], ["rollup", bad, "--loadout", "ferry"]):
        r = run(*command)
        assert r.returncode == 2
        line = one_line(r.stderr)
        # the fixture's loadout 'ferry' names item 'ghost-tank', which the file does not define
        assert line.startswith(f"steelyard: {bad}: ") and "ghost-tank" in line
