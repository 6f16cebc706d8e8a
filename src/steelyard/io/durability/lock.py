"""One writer per ledger file, across SSH sessions and machines sharing a folder.

The lock is a small JSON file next to the ledger, `.<name>.steelyard.lock`,
created with O_CREAT|O_EXCL so that of two sessions starting together exactly
one gets it. It names who holds it (login name, host, process id, since when)
so the second session can say so and open read-only.

It is advisory: only steelyard looks at it. A text editor, `git checkout` or
a copy over the file ignore it; saving still refuses to overwrite a file that
changed on disk (io.ledger.file). The editor and every CLI command that
rewrites a ledger take it.

Anyone who can write the folder can plant something at the lock's name. A
lock is read only if it is a regular file (checked with lstat, then opened
with O_NOFOLLOW|O_NONBLOCK and checked again with fstat), and at most
`MAX_LOCK_BYTES` of it: a symlink, a FIFO or a device there is refused
(`LockRefused`), never followed, waited on or read without end. See
docs/durability.md.
"""

from __future__ import annotations

import datetime as _dt
import getpass
import json
import os
import socket
import stat
import time
import uuid
from dataclasses import dataclass
from pathlib import Path

from steelyard.core.errors import SteelyardError
from steelyard.io.durability.no_follow import open_existing

_READ_TRIES = 5  # a lock file read empty is being written right now: look again briefly
MAX_LOCK_BYTES = 4096  # ours are about 200 bytes; anything longer is not a steelyard lock


@dataclass(frozen=True)
class LockInfo:
    user: str
    host: str
    pid: int
    since: str  # ISO-8601 UTC

    def describe(self) -> str:
        return f"{self.user} on {self.host} (process {self.pid}) since {self.since}"


class Locked(SteelyardError):
    """Someone else holds the ledger's lock; `.info` says who."""

    def __init__(self, info: LockInfo, *, file: str | None = None) -> None:
        super().__init__(f"locked by {info.describe()}; open it read-only or take over a stale lock",
                         file=file)
        self.info = info


class LockUnavailable(SteelyardError):
    """No lock can be made here (a read-only folder): the ledger can only be opened read-only.

    `strerror` is the system's reason when the lock file could not be created or written.
    """

    def __init__(self, message: str, *, file: str | None = None, strerror: str | None = None) -> None:
        super().__init__(message, file=file)
        self.strerror = strerror


class LockRefused(LockUnavailable):
    """Something that is not a lock file (a symlink, a FIFO, a device) sits at the lock's name."""


def _refuse(path: Path, kind: str) -> LockRefused:
    return LockRefused(f"is {kind}, not a steelyard lock file; refusing it (remove it if no steelyard is "
                       "using the ledger)", file=str(path))


def _read_lock_bytes(path: Path) -> bytes | None:
    """At most MAX_LOCK_BYTES + 1 bytes of a regular lock file; None if there is none; LockRefused otherwise."""
    fd = open_existing(path, os.O_RDONLY, refuse=lambda kind: _refuse(path, kind),
                       failure=lambda why: LockUnavailable(f"cannot read the lock file ({why})", file=str(path)))
    if fd is None:
        return None
    try:
        if not stat.S_ISREG(os.fstat(fd).st_mode):
            raise _refuse(path, "not a regular file")
        chunks, size = [], 0
        while size <= MAX_LOCK_BYTES:
            chunk = os.read(fd, MAX_LOCK_BYTES + 1 - size)
            if not chunk:
                break
            chunks.append(chunk)
            size += len(chunk)
        return b"".join(chunks)
    finally:
        os.close(fd)


def who_am_i() -> str:
    """The login name, or "unknown" when the system cannot tell."""
    try:
        return getpass.getuser() or "unknown"
    except Exception:  # no name in the environment or password database
        return "unknown"


def this_host() -> str:
    return socket.gethostname() or "unknown"


def lock_path(ledger_path: str | os.PathLike) -> Path:
    """`.<name>.steelyard.lock` beside the real file (symlinks resolved, so every path to it agrees)."""
    real = Path(os.path.realpath(ledger_path))
    return real.with_name(f".{real.name}.steelyard.lock")


def _now() -> str:
    return _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")


def _parse(data: bytes) -> LockInfo | None:
    if len(data) > MAX_LOCK_BYTES:
        return None
    try:
        raw = json.loads(data.decode("utf-8"))
        pid = raw["pid"]
        if type(pid) is not int:
            return None
        return LockInfo(str(raw["user"]), str(raw["host"]), pid, str(raw["since"]))
    except (ValueError, KeyError, TypeError, UnicodeDecodeError):
        return None


def _unreadable(path: Path) -> LockInfo:
    try:
        since = _dt.datetime.fromtimestamp(os.lstat(path).st_mtime, _dt.timezone.utc).strftime("%Y-%m-%dT%H:%M:%SZ")
    except OSError:
        since = "unknown"
    return LockInfo("unknown", "unknown", 0, since)


def _read(path: Path) -> tuple[bytes, LockInfo] | None:
    """The lock's bytes and what they say; None if there is no lock file."""
    data = b""
    for attempt in range(_READ_TRIES):
        got = _read_lock_bytes(path)
        if got is None:
            return None
        data = got
        info = _parse(data)
        if info is not None:
            return data, info
        time.sleep(0.02 * (attempt + 1))
    return data, _unreadable(path)


def read_lock(ledger_path: str | os.PathLike) -> LockInfo | None:
    """Who holds the ledger's lock, or None if nobody does."""
    got = _read(lock_path(ledger_path))
    return None if got is None else got[1]


def pid_running(pid: int) -> bool:
    """Whether a process with this id exists on this machine (another user's counts)."""
    if pid <= 0:
        return False
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except PermissionError:
        return True
    except OSError:
        return False
    return True


def _started_after(pid: int, since: str) -> bool:
    """Linux: the process now using `pid` started after the lock was taken (the pid was reused)."""
    try:
        stat = Path(f"/proc/{pid}/stat").read_text()
        ticks = int(stat.rsplit(")", 1)[1].split()[19])
        btime = next(int(line.split()[1]) for line in Path("/proc/stat").read_text().splitlines()
                     if line.startswith("btime "))
        started = btime + ticks / os.sysconf("SC_CLK_TCK")
        taken = _dt.datetime.strptime(since, "%Y-%m-%dT%H:%M:%SZ").replace(tzinfo=_dt.timezone.utc).timestamp()
    except (OSError, ValueError, IndexError, StopIteration):
        return False
    return started > taken + 2.0  # the lock's time is to the second; allow for clock-tick rounding


def is_stale(info: LockInfo) -> bool:
    """A lock from this host whose process is gone (or whose pid now belongs to a younger process).

    A lock from another host is never stale automatically: from here we cannot
    see whether that process runs. The user decides (take_over with force=True).
    """
    if info.host != this_host():
        return False
    return not pid_running(info.pid) or _started_after(info.pid, info.since)


class Lock:
    """A held lock. `release()` removes the lock file only while it is still this one."""

    def __init__(self, ledger_path: str | os.PathLike, path: Path, info: LockInfo, content: bytes) -> None:
        self.ledger_path = str(ledger_path)
        self.path = path
        self.info = info
        self._content = content
        self.released = False

    def _ours(self) -> bool:
        try:
            return _read_lock_bytes(self.path) == self._content
        except SteelyardError:  # replaced by something that is not ours
            return False

    @property
    def held(self) -> bool:
        """Whether the lock file on disk is still ours (someone may have taken it over)."""
        return not self.released and self._ours()

    def release(self) -> None:
        if self.released:
            return
        self.released = True
        try:
            if self._ours():
                self.path.unlink()
        except FileNotFoundError:
            pass

    def __enter__(self) -> "Lock":
        return self

    def __exit__(self, *exc) -> None:
        self.release()

    def __repr__(self) -> str:
        return f"Lock({self.path}, {self.info.describe()})"


def acquire(ledger_path: str | os.PathLike) -> Lock:
    """Take the ledger's lock, or raise `Locked` naming its holder (or `LockUnavailable`)."""
    path = lock_path(ledger_path)
    info = LockInfo(who_am_i(), this_host(), os.getpid(), _now())
    content = (json.dumps({"program": "steelyard", "user": info.user, "host": info.host, "pid": info.pid,
                           "since": info.since, "token": uuid.uuid4().hex}, indent=1) + "\n").encode()
    for _ in range(20):  # a lock released between our try and our look: try again, a bounded number of times
        try:
            fd = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL | os.O_NOFOLLOW, 0o644)
        except FileExistsError:
            got = _read(path)
            if got is None:
                continue
            raise Locked(got[1], file=str(ledger_path)) from None
        except OSError as exc:
            raise LockUnavailable(f"cannot create the lock file {path.name} ({exc.strerror}); "
                                  "open it read-only", file=str(ledger_path), strerror=exc.strerror) from None
        try:
            os.write(fd, content)
            os.fsync(fd)
        except OSError as exc:  # disk full: leave no empty lock behind
            os.close(fd)
            path.unlink(missing_ok=True)
            raise LockUnavailable(f"cannot write the lock file {path.name} ({exc.strerror}); "
                                  "open it read-only", file=str(ledger_path), strerror=exc.strerror) from None
        os.close(fd)
        return Lock(ledger_path, path, info, content)
    raise Locked(_unreadable(path), file=str(ledger_path))


def take_over(ledger_path: str | os.PathLike, info: LockInfo, *, force: bool = False) -> Lock:
    """Replace the lock described by `info`, if it is still exactly that lock, with ours.

    Without `force` the lock must be stale (`is_stale`). The old lock file is
    moved aside only after checking its content, and ours is then created with
    O_EXCL, so of two sessions taking over together one wins and the other is
    told who did.
    """
    path = lock_path(ledger_path)
    got = _read(path)
    if got is None:
        return acquire(ledger_path)
    data, current = got
    if current != info:
        raise Locked(current, file=str(ledger_path))
    if not force and not is_stale(current):
        raise SteelyardError(f"the lock of {current.describe()} is not stale; it can only be taken over "
                             "by choice", file=str(ledger_path))
    aside = path.with_name(f"{path.name}.{uuid.uuid4().hex}.old")
    try:
        os.rename(path, aside)
    except FileNotFoundError:
        return acquire(ledger_path)
    try:
        try:
            moved = _read_lock_bytes(aside)
        except SteelyardError:  # something else was swapped in: put it back untouched
            moved = None
        if moved != data:  # someone replaced it between our look and our move: put theirs back
            try:
                os.link(aside, path)
            except OSError:
                pass
            info_now = (_parse(moved) if moved is not None else None) or _unreadable(aside)
            raise Locked(info_now, file=str(ledger_path))
    finally:
        try:
            aside.unlink()
        except FileNotFoundError:
            pass
    return acquire(ledger_path)
