"""Atomic file replacement, and the guards every file the program writes goes through.

The new content goes to a temporary file in the same folder (created with
O_CREAT|O_EXCL|O_NOFOLLOW by `tempfile.mkstemp`, so it can never be a file
someone planted), is flushed and fsync'd, then renamed over the target, and
the folder is fsync'd. A reader (or a crash) sees the complete old file or
the complete new one, never a mix.

Symlinks: a ledger saved to the path it was read from is written through a
symlink (`through_symlink=True`), as editors do. Any other output (a report,
its charts, an export, a snapshot, `-o`) refuses a symlink at its path, so a
link planted where an output goes cannot redirect the write. See
docs/durability.md.
"""

from __future__ import annotations

import hashlib
import os
import stat
import tempfile
from collections.abc import Sequence
from pathlib import Path

from steelyard.core.errors import SteelyardError

#: Paths whose last load failed; they are never written over by the program.
_FAILED_LOADS: set[str] = set()

#: `expect_sha256` value meaning "the target must still not exist".
ABSENT = "absent"


class ChangedOnDisk(SteelyardError):
    """The file changed since it was read; saving would overwrite someone's work."""


def mark_failed(path: str | os.PathLike) -> None:
    _FAILED_LOADS.add(os.path.realpath(path))


def mark_loaded(path: str | os.PathLike) -> None:
    _FAILED_LOADS.discard(os.path.realpath(path))


def _umask() -> int:
    current = os.umask(0)
    os.umask(current)
    return current


def same_file(a: str | os.PathLike, b: str | os.PathLike) -> bool:
    """Whether two paths name one file (after symlinks, or the same inode: a hard link, a bind mount)."""
    if os.path.realpath(a) == os.path.realpath(b):
        return True
    try:
        return os.path.samefile(a, b)
    except OSError:
        return False


def read_only(st: os.stat_result) -> bool:
    """No write permission bit is set (judged by the mode bits: root passes access() for any file)."""
    return not st.st_mode & (stat.S_IWUSR | stat.S_IWGRP | stat.S_IWOTH)


def writable_check(path: str | os.PathLike, *, force: bool, what: str = "--force rewrites it anyway") -> None:
    """Refuse to replace an existing file that has no write permission (unless `force`), as editors do."""
    try:
        st = os.stat(path)
    except OSError:
        return
    if force or not stat.S_ISREG(st.st_mode):
        return
    if read_only(st) or (os.getuid() != 0 and not os.access(path, os.W_OK)):
        raise SteelyardError(f"is read-only (no write permission); {what}", file=str(path))


def check_output(path: str | os.PathLike, *, inputs=(), force: bool = False,
                 hint: str = "make it writable or write elsewhere") -> None:
    """Refuse an output path that would write through a symlink, onto an input, or over a read-only file.

    Call it for every output a command writes before writing any of them, so a
    refusal leaves nothing half-done.
    """
    name = str(path)
    try:
        st = os.lstat(path)
    except FileNotFoundError:
        return
    except OSError as exc:
        raise SteelyardError(f"cannot write: {exc.strerror}", file=name) from None
    if stat.S_ISLNK(st.st_mode):
        raise SteelyardError("is a symbolic link; an output is never written through one (remove it or "
                             "write elsewhere)", file=name)
    if stat.S_ISDIR(st.st_mode):
        raise SteelyardError("is a directory, not a file", file=name)
    if not stat.S_ISREG(st.st_mode):
        raise SteelyardError("is not a regular file; refusing to replace it", file=name)
    for source in inputs:
        if source is None:
            continue
        from steelyard.io.vcs.revision import split_revision

        at = split_revision(source)  # FILE@REV: its working copy is the ledger too
        if same_file(path, source) or (at is not None and same_file(path, at[0])):
            raise SteelyardError("is an input of this command (the ledger); write elsewhere", file=name)
    if not force:
        writable_check(path, force=False, what=hint)


def write_output(path: str | os.PathLike, data: bytes | Sequence[bytes], *, inputs=(), force: bool = False) -> None:
    """Write a derived file (report, chart, export, snapshot) atomically, after `check_output`.
    `data`: the bytes, or pieces written one after the other (a big export need not be joined)."""
    check_output(path, inputs=inputs, force=force)
    write_atomic(path, data)


def file_sha256(path: str | os.PathLike) -> str:
    """The file's content hash, or ABSENT; the file is opened without following a link at its name."""
    try:
        fd = os.open(path, os.O_RDONLY | os.O_NOFOLLOW | os.O_NONBLOCK)
    except FileNotFoundError:
        return ABSENT
    try:
        if not stat.S_ISREG(os.fstat(fd).st_mode):
            return "not a regular file"
        with os.fdopen(fd, "rb", closefd=False) as fh:
            return hashlib.file_digest(fh, "sha256").hexdigest()
    finally:
        os.close(fd)


def write_atomic(path: str | os.PathLike, data: bytes | Sequence[bytes], *, through_symlink: bool = False,
                 expect_sha256: str | None = None) -> None:
    """Replace `path` with `data` atomically, keeping the old file's permissions. `data` may be a
    list (or tuple) of bytes pieces, written in order as one file.

    `through_symlink`: a symlink at `path` is followed and its target replaced
    (a ledger saved where it was read); otherwise a symlink there is refused.
    `expect_sha256`: after the new bytes are on disk and just before the
    rename, the target must still hash to this (or still not exist, ABSENT);
    otherwise `ChangedOnDisk` and nothing is replaced. Any OSError becomes a
    SteelyardError "FILE: cannot write: <reason>"; the old file is left whole.
    """
    name = str(path)
    if through_symlink:
        target = Path(os.path.realpath(path))
    else:
        target = Path(os.path.abspath(path))
        if os.path.islink(target):
            raise SteelyardError("is a symbolic link; an output is never written through one (remove it or "
                                 "write elsewhere)", file=name)
    if str(target) in _FAILED_LOADS or os.path.realpath(target) in _FAILED_LOADS:
        raise SteelyardError("refusing to write over a file that failed to load; fix it or save elsewhere",
                             file=str(target))
    folder = target.parent
    try:
        mode = os.stat(target).st_mode & 0o7777
    except FileNotFoundError:
        mode = 0o666 & ~_umask()  # a new file gets the permissions open() would give it
    except OSError as exc:
        raise SteelyardError(f"cannot write: {exc.strerror}", file=name) from None
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=folder)
    except OSError as exc:
        raise SteelyardError(f"cannot write: {exc.strerror}", file=name) from None
    try:
        with os.fdopen(fd, "wb") as fh:
            if isinstance(data, (list, tuple)):
                fh.writelines(data)
            else:
                fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        os.chmod(tmp, mode)
        if expect_sha256 is not None and file_sha256(target) != expect_sha256:
            raise ChangedOnDisk("changed on disk while it was being written; nothing was replaced", file=name)
        os.replace(tmp, target)
    except BaseException as exc:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        if isinstance(exc, OSError):
            raise SteelyardError(f"cannot write: {exc.strerror or exc}", file=name) from None
        raise
    try:
        dir_fd = os.open(folder, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(dir_fd)
    except OSError:
        pass
    finally:
        os.close(dir_fd)
