"""Journal of unsaved edits, so a crash or a dropped SSH session loses nothing.

Every accepted edit is appended, as one line of JSON, to
`.<name>.steelyard-journal` beside the real ledger file, and fsync'd before
the call returns. Why beside the file and not in a per-user data folder: a
folder where the ledger can be saved (atomic saves need to create files
there) can always hold its journal; the journal sits on the same disk and
goes wherever the file goes; and whoever opens the file next, the same user
reconnecting or a colleague taking over a stale lock, finds it.

The first line is a header with the sha256 of the ledger file the edits
start from. Each later line is one edit (a "record") with a sequence number
and a CRC-32 of the line, so a line torn by a kill or a power cut is
recognised and everything from it on is ignored. A record holds the whole new
item (SI values) or a delete, a loadout change, ...; `replay` applies records
to a ledger. See docs/durability.md for how the editor uses this module.

The journal's name is predictable, so anything may have been planted there.
It is never opened through a symlink (ONOFOLLOW), a new one is created with
O_EXCL, and an existing one is used only if it is a regular file with no
other name (checked with lstat, then fstat on what was opened, O_NONBLOCK so
a FIFO cannot hang the editor). Anything else is refused with a one-line
SteelyardError, and left untouched.
"""

from __future__ import annotations

import datetime as _dt
import getpass
import json
import os
import re
import socket
import zlib
from dataclasses import dataclass
from pathlib import Path

from steelyard.core.errors import SteelyardError
from steelyard.core.document.model import Ledger
from steelyard.io.durability.no_follow import NOFOLLOW, kind_of, open_existing
from steelyard.io.durability.journal_records import (  # noqa: F401 - records live there; re-exported for callers
    amount_from_json, amount_record, amount_to_json, delete_record, describe, edit_record, item_from_json, item_record, item_to_json, loadout_delete_record, loadout_from_json, loadout_record, loadout_to_json, replay, _MAX_ITEM_OPS,
)

try:
    import fcntl
except ImportError:  # pragma: no cover - not POSIX
    fcntl = None

VERSION = 1
SUFFIX = ".steelyard-journal"
#: more changed items than this in one edit are journaled as one splice
_TAIL = re.compile(rb',"crc":"([0-9a-f]{8})"\}$')


class JournalInUse(SteelyardError):
    """Another live editor (or another Journal in this process) is writing this journal."""


class JournalConflict(SteelyardError):
    """Unsaved edits from an earlier session wait in the journal; restore or discard them first."""


def journal_path(ledger_path: str | os.PathLike) -> Path:
    """`.<name>.steelyard-journal` beside the real file (symlinks resolved, like the lock)."""
    real = Path(os.path.realpath(ledger_path))
    return real.with_name(f".{real.name}{SUFFIX}")


def _not_a_journal(path: Path, kind: str) -> SteelyardError:
    return SteelyardError(f"is {kind}, not a steelyard journal; refusing it (remove it if no steelyard is "
                          "editing the ledger)", file=str(path))


def _hard_linked(path: Path, st: os.stat_result) -> SteelyardError | None:
    if st.st_nlink > 1:
        return SteelyardError("has other names (hard links), so it is not a steelyard journal; refusing it "
                              "(remove it if no steelyard is editing the ledger)", file=str(path))
    return None


def _refused(path: Path, st: os.stat_result) -> SteelyardError | None:
    """Why the file at the journal's name is not one to use, or None if it is."""
    kind = kind_of(st)
    return _not_a_journal(path, kind) if kind is not None else _hard_linked(path, st)


def _open_existing(path: Path, flags: int) -> int | None:
    """An fd on the existing regular journal at `path` (never through a link), or None if there is none."""
    fd = open_existing(path, flags, refuse=lambda kind: _not_a_journal(path, kind),
                       failure=lambda why: SteelyardError(f"cannot open the journal ({why})", file=str(path)),
                       check=lambda st: _hard_linked(path, st))
    if fd is None:
        return None
    why = _refused(path, os.fstat(fd))
    if why is not None:
        os.close(fd)
        raise why
    return fd


def _read_all(fd: int) -> bytes:
    size = os.fstat(fd).st_size
    return os.pread(fd, size, 0) if size else b""


# --------------------------------------------------------------- line format
def _json_default(v: object):
    if isinstance(v, (_dt.datetime, _dt.date, _dt.time)):
        return v.isoformat()
    if hasattr(v, "item"):  # numpy scalars
        return v.item()
    raise TypeError(f"cannot journal a {type(v).__name__}")


def encode_line(obj: dict) -> bytes:
    """One ASCII line: the JSON object with its own CRC-32 as the last key."""
    body = json.dumps(obj, ensure_ascii=True, separators=(",", ":"), default=_json_default).encode("ascii")
    return body[:-1] + b',"crc":"%08x"}\n' % zlib.crc32(body)


def decode_line(line: bytes) -> dict | None:
    """The object of one line (without its newline), or None if torn or damaged."""
    m = _TAIL.search(line)
    if m is None:
        return None
    body = line[:m.start()] + b"}"
    if zlib.crc32(body) != int(m.group(1), 16):
        return None
    try:
        obj = json.loads(body)
    except ValueError:
        return None
    return obj if isinstance(obj, dict) else None


@dataclass(frozen=True)
class _Scan:
    header: dict | None
    records: list[dict]  # every good record, save markers included
    good_end: int  # byte offset just past the last good line
    ignored_lines: int  # lines (a torn tail counts as one) after good_end
    torn: bool  # the file ends in a partial line


def _scan(data: bytes) -> _Scan:
    header: dict | None = None
    records: list[dict] = []
    pos = good_end = 0
    while pos < len(data):
        nl = data.find(b"\n", pos)
        if nl < 0:
            break
        obj = decode_line(data[pos:nl])
        if obj is None:
            break
        if header is None:
            if obj.get("steelyard_journal") != VERSION or not isinstance(obj.get("base_sha256"), str):
                break
            header = obj
        elif obj.get("seq") != len(records) + 1:
            break
        else:
            records.append(obj)
        pos = good_end = nl + 1
    rest = data[good_end:]
    torn = bool(rest) and not rest.endswith(b"\n")
    return _Scan(header, records, good_end, rest.count(b"\n") + int(torn), torn)


def _unsaved(scan: _Scan) -> tuple[str | None, list[dict]]:
    """Base hash and records after the last save marker."""
    if scan.header is None:
        return None, []
    base, out = scan.header["base_sha256"], []
    for r in scan.records:
        if r.get("op") == "saved":
            base, out = r.get("sha256"), []
        else:
            out.append(r)
    return base, out


def _file_sha256(path: str | os.PathLike) -> str | None:
    import hashlib

    try:
        with open(path, "rb") as fh:
            return hashlib.file_digest(fh, "sha256").hexdigest()
    except OSError:
        return None


def _held_elsewhere(path: Path) -> bool:
    """A live writer holds the journal (its flock); False where flock is unavailable."""
    if fcntl is None:
        return False
    try:
        fd = os.open(path, os.O_RDONLY | NOFOLLOW)
    except OSError:
        return False
    try:
        fcntl.flock(fd, fcntl.LOCK_SH | fcntl.LOCK_NB)
        return False
    except OSError:
        return True
    finally:
        os.close(fd)


def _take_writer_lock(fd: int, jpath: Path) -> None:
    """The journal's writer lock (an exclusive flock), or JournalInUse while a live editor holds it."""
    if fcntl is None:
        return
    try:
        fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
    except OSError:
        raise JournalInUse("another editor is writing this journal", file=str(jpath)) from None


def _fsync_dir(path: Path) -> None:
    try:
        fd = os.open(path.parent, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(fd)
    except OSError:
        pass
    finally:
        os.close(fd)


# ------------------------------------------------------------ what's pending
@dataclass(frozen=True)
class JournalState:
    """What a journal would restore; from `pending`."""

    path: str  # the journal file
    records: tuple[dict, ...]  # unsaved edits, oldest first
    base_sha256: str | None  # sha256 of the ledger file the edits start from
    current_sha256: str | None  # the ledger file as it is now (None: missing)
    matches: bool  # base == current: the edits belong to the file as it is
    in_use: bool  # a live editor is writing this journal right now: do not restore
    user: str | None
    host: str | None
    pid: int | None
    started: str | None  # when the journal began (ISO 8601, UTC)
    torn: bool  # a partly written last line was ignored
    ignored_lines: int

    def describe(self) -> list[str]:
        """One plain line per edit (user text quoted with repr, so no escapes reach a terminal)."""
        return [describe(r) for r in self.records]


def pending(ledger_path: str | os.PathLike, *, current_sha256: str | None = None) -> JournalState | None:
    """The unsaved edits journaled for this ledger, or None when there are none. Reads only."""
    jpath = journal_path(ledger_path)
    fd = _open_existing(jpath, os.O_RDONLY)
    if fd is None:
        return None
    try:
        data = _read_all(fd)
    except OSError as exc:
        raise SteelyardError(f"cannot read the journal ({exc.strerror})", file=str(jpath)) from None
    finally:
        os.close(fd)
    scan = _scan(data)
    base, records = _unsaved(scan)
    if not records:
        return None
    current = current_sha256 if current_sha256 is not None else _file_sha256(ledger_path)
    h = scan.header or {}
    pid = h.get("pid")
    return JournalState(str(jpath), tuple(records), base, current, base is not None and base == current,
                        _held_elsewhere(jpath), _str_or_none(h.get("user")), _str_or_none(h.get("host")),
                        pid if type(pid) is int else None, _str_or_none(h.get("started")), scan.torn,
                        scan.ignored_lines)


def _str_or_none(v: object) -> str | None:
    return v if isinstance(v, str) else None


def discard(ledger_path: str | os.PathLike) -> bool:
    """Delete the ledger's journal (restore declined, or edits saved); True if there was one.

    Refuses with `JournalInUse` while a live `Journal` writes it: close that one instead.
    """
    jpath = journal_path(ledger_path)
    fd = _open_existing(jpath, os.O_RDONLY)
    if fd is None:
        return False
    try:
        _take_writer_lock(fd, jpath)
        try:
            os.unlink(jpath)
        except FileNotFoundError:
            return False
    finally:
        os.close(fd)
    _fsync_dir(jpath)
    return True


# ------------------------------------------------------------------- writer
class Journal:
    """The append-only journal of one editing session. Use `Journal.open`."""

    def __init__(self, path: Path, fd: int, next_seq: int, end: int, base_sha256: str, unsaved: int):
        self.path = path
        self._fd: int | None = fd
        self._seq = next_seq
        self._end = end  # byte length of the good content
        self.base_sha256 = base_sha256
        self.unsaved = unsaved  # records since the last save

    @classmethod
    def open(cls, ledger_path: str | os.PathLike, base_sha256: str, *, resume: bool = False,
             user: str | None = None) -> "Journal":
        """Start journaling edits made on the ledger file whose bytes hash to `base_sha256`.

        If unsaved edits wait in the journal, the caller must have decided
        about them first (see `pending`): `resume=True` after restoring them
        (same base: appending carries on after them), or `discard` beforehand.
        Otherwise JournalConflict, so no edit is ever dropped or mixed in silently.
        """
        jpath = journal_path(ledger_path)
        try:
            mode = os.stat(os.path.realpath(ledger_path)).st_mode & 0o666
        except OSError:
            mode = 0o666
        try:  # a new journal: O_EXCL, so nothing planted at the name is ever opened
            fd = os.open(jpath, os.O_RDWR | os.O_CREAT | os.O_EXCL | NOFOLLOW, mode)
        except FileExistsError:
            fd = _open_existing(jpath, os.O_RDWR)
            if fd is None:  # removed meanwhile: one more try at creating it
                fd = cls._create(jpath, mode)
        except OSError as exc:
            raise SteelyardError(f"cannot create the journal of unsaved edits ({exc.strerror})",
                                 file=str(jpath)) from None
        try:
            _take_writer_lock(fd, jpath)
            scan = _scan(_read_all(fd))
            base, records = _unsaved(scan)
            if records and not (resume and base == base_sha256):
                why = ("they belong to another version of the file" if resume else "restore or discard them first")
                raise JournalConflict(f"{len(records)} unsaved edit(s) from an earlier session are waiting; {why}",
                                      file=str(ledger_path))
            journal = cls(jpath, fd, len(scan.records) + 1, scan.good_end, base_sha256, len(records))
            if records:
                os.ftruncate(fd, scan.good_end)  # drop a torn tail, keep appending after the good lines
                os.fsync(fd)
            else:
                journal._restart(base_sha256, user)
            return journal
        except BaseException:
            os.close(fd)
            raise

    @staticmethod
    def _create(jpath: Path, mode: int) -> int:
        try:
            return os.open(jpath, os.O_RDWR | os.O_CREAT | os.O_EXCL | NOFOLLOW, mode)
        except OSError as exc:
            raise SteelyardError(f"cannot create the journal of unsaved edits ({exc.strerror})",
                                 file=str(jpath)) from None

    def _restart(self, base_sha256: str, user: str | None = None) -> None:
        """Empty the journal and write a fresh header for `base_sha256`."""
        header = {"steelyard_journal": VERSION, "base_sha256": base_sha256, "user": user or _user(),
                  "host": socket.gethostname(), "pid": os.getpid(),
                  "started": _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds")}
        os.ftruncate(self._fd, 0)
        self._end, self._seq, self.unsaved, self.base_sha256 = 0, 1, 0, base_sha256
        self._write(encode_line(header))
        _fsync_dir(self.path)

    def _write(self, line: bytes) -> None:
        fd = self._require()
        try:
            view = memoryview(line)
            offset = self._end
            while view:
                n = os.pwrite(fd, view, offset)
                view, offset = view[n:], offset + n
            (os.fdatasync if hasattr(os, "fdatasync") else os.fsync)(fd)
        except OSError as exc:
            try:  # never leave half a line for the next append to follow
                os.ftruncate(fd, self._end)
            except OSError:
                pass
            raise SteelyardError(f"cannot write the journal ({exc.strerror}); unsaved edits are not protected",
                                 file=str(self.path)) from None
        self._end += len(line)

    def _require(self) -> int:
        if self._fd is None:
            raise SteelyardError("the journal is closed", file=str(self.path))
        return self._fd

    def append(self, record: dict) -> int:
        """Append one edit record and fsync it; returns its sequence number."""
        if not isinstance(record, dict) or ("op" not in record and "ops" not in record):
            raise ValueError("a journal record is a dict with 'op' (or 'ops')")
        if "seq" in record or "crc" in record:
            raise ValueError("'seq' and 'crc' are set by the journal")
        seq = self._seq
        self._write(encode_line({"seq": seq, **record}))
        self._seq += 1
        if record.get("op") != "saved":
            self.unsaved += 1
        return seq

    def record(self, old: Ledger, new: Ledger, *, change: dict | None = None) -> int | None:
        """Journal the edit that turned `old` into `new` (also undo and redo); None if nothing changed."""
        rec = edit_record(old, new, change=change)
        return None if rec is None else self.append(rec)

    def saved(self, new_sha256: str) -> None:
        """After a successful save: the edits are in the file; start over from its new hash."""
        self.append({"op": "saved", "sha256": new_sha256})
        self._restart(new_sha256)

    def close(self, *, discard: bool = False) -> None:
        """Stop journaling. The file is removed when it holds no unsaved edits or `discard` is set."""
        if self._fd is None:
            return
        fd, self._fd = self._fd, None
        try:
            if discard or self.unsaved == 0:
                try:
                    os.unlink(self.path)
                except FileNotFoundError:
                    pass
                _fsync_dir(self.path)
        finally:
            os.close(fd)  # releases the flock

    def __enter__(self) -> "Journal":
        return self

    def __exit__(self, *exc) -> None:
        self.close()


def _user() -> str:
    try:
        return getpass.getuser()
    except Exception:  # no name for this uid (containers)
        return f"uid {os.getuid()}" if hasattr(os, "getuid") else "unknown"


