"""Opening a file that sits where anyone who can write the folder may plant something.

The journal and the lock file live next to the ledger under fixed names: a
symlink, FIFO or device put there must be refused, never followed, waited on
or read. Both open such a file the same way: lstat first, then open with
O_NOFOLLOW|O_NONBLOCK (a link swapped in after the lstat fails with ELOOP),
and the caller checks the open descriptor again with fstat.
"""

from __future__ import annotations

import errno
import os
import stat
from collections.abc import Callable
from pathlib import Path

#: what a file that is not a regular one is, in the words of a refusal
KINDS = {stat.S_IFLNK: "a symbolic link", stat.S_IFIFO: "a FIFO", stat.S_IFCHR: "a device",
         stat.S_IFBLK: "a device", stat.S_IFDIR: "a directory", stat.S_IFSOCK: "a socket"}
#: open flags that never follow a link, never block on a FIFO and never take a terminal
NOFOLLOW = os.O_NOFOLLOW | os.O_NONBLOCK | getattr(os, "O_NOCTTY", 0)


def kind_of(st: os.stat_result) -> str | None:
    """What the file is ("a FIFO", "a symbolic link", ...), or None for a regular file."""
    if stat.S_ISREG(st.st_mode):
        return None
    return KINDS.get(stat.S_IFMT(st.st_mode), "not a regular file")


def open_existing(path: Path, flags: int, *, refuse: Callable[[str], Exception],
                  failure: Callable[[str], Exception],
                  check: Callable[[os.stat_result], Exception | None] = lambda st: None) -> int | None:
    """An fd on the regular file at `path`, never through a link; None if there is none.

    `refuse(kind)` is raised for anything else at the name (before the open,
    or a link swapped in after the lstat), `check(lstat)` may refuse a regular
    file too, `failure(strerror)` is raised for any other system error.
    """
    try:
        st = os.lstat(path)
    except FileNotFoundError:
        return None
    except OSError as exc:
        raise failure(exc.strerror) from None
    kind = kind_of(st)
    why = refuse(kind) if kind is not None else check(st)
    if why is not None:
        raise why
    try:
        return os.open(path, flags | NOFOLLOW)
    except FileNotFoundError:
        return None
    except OSError as exc:
        if exc.errno == errno.ELOOP:  # replaced by a symlink since the lstat
            raise refuse(KINDS[stat.S_IFLNK]) from None
        raise failure(exc.strerror) from None
