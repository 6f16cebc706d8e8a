"""Atomic file replacement.

The new content goes to a temporary file in the same folder, is flushed and
fsync'd, then renamed over the target, and the folder is fsync'd. A reader
(or a crash) sees the complete old file or the complete new one, never a mix.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from steelyard.core.errors import SteelyardError

#: Paths whose last load failed; they are never written over by the program.
_FAILED_LOADS: set[str] = set()


def mark_failed(path: str | os.PathLike) -> None:
    _FAILED_LOADS.add(os.path.realpath(path))


def mark_loaded(path: str | os.PathLike) -> None:
    _FAILED_LOADS.discard(os.path.realpath(path))


def _umask() -> int:
    current = os.umask(0)
    os.umask(current)
    return current


def write_atomic(path: str | os.PathLike, data: bytes) -> None:
    """Replace `path` with `data` atomically, keeping the old file's permissions."""
    target = Path(os.path.realpath(path))  # write through a symlink, not over it
    if str(target) in _FAILED_LOADS:
        raise SteelyardError("refusing to write over a file that failed to load; fix it or save elsewhere",
                             file=str(target))
    folder = target.parent if str(target.parent) else Path(".")
    try:
        mode = target.stat().st_mode & 0o7777
    except FileNotFoundError:
        mode = 0o666 & ~_umask()  # a new file gets the permissions open() would give it
    fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp", dir=folder)
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
        if mode is not None:
            os.chmod(tmp, mode)
        os.replace(tmp, target)
    except BaseException:
        try:
            os.unlink(tmp)
        except FileNotFoundError:
            pass
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
