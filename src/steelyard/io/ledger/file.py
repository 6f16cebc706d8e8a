"""Opening and saving ledger files on disk.

`open_ledger` remembers what it read (hash, whether the text had comments)
so that `save_ledger` can refuse to overwrite a file someone changed on disk,
warn before dropping hand-written comments, and never write over a file
that failed to load.
"""

from __future__ import annotations

import hashlib
import os
import re
import time
from dataclasses import dataclass
from pathlib import Path

from steelyard.core.errors import FormatError, SteelyardError
from steelyard.core.document.model import Ledger
from steelyard.io.durability.atomic import mark_failed, mark_loaded, write_atomic
from steelyard.io.ledger.read import Progress, ledger_from_data
from steelyard.io.ledger.write import ledger_to_toml
from steelyard.io.ledger.toml_read import decode, parse_toml

# A TOML comment is a '#' outside any string; strings are matched first so a
# '#' inside "..." or '''...''' is skipped.
_TOKENS = re.compile(r'"""[\s\S]*?"""|\'\'\'[\s\S]*?\'\'\'|"(?:[^"\\\n]|\\.)*"|\'[^\'\n]*\'|#')


def has_comments(text: str) -> bool:
    if "#" not in text:
        return False
    return any(m.group(0) == "#" for m in _TOKENS.finditer(text))


@dataclass(frozen=True)
class LoadedLedger:
    ledger: Ledger
    path: str
    sha256: str
    had_comments: bool
    read_at: float


class CommentsWouldBeLost(SteelyardError):
    """Saving would replace a hand-edited file whose comments the writer cannot keep."""


class ChangedOnDisk(SteelyardError):
    """The file changed since it was read; saving would overwrite someone's work."""


def read_bytes(path: str | os.PathLike) -> bytes:
    p = Path(path)
    try:
        return p.read_bytes()
    except FileNotFoundError:
        raise SteelyardError("no such file", file=str(path)) from None
    except IsADirectoryError:
        raise SteelyardError("is a directory, not a ledger file", file=str(path)) from None
    except PermissionError:
        raise SteelyardError("permission denied", file=str(path)) from None
    except OSError as exc:
        raise SteelyardError(f"cannot read ({exc.strerror})", file=str(path)) from None


def open_ledger(path: str | os.PathLike, *, progress: Progress | None = None,
                fast: bool = True) -> LoadedLedger:
    """Read and check a ledger file. On any error the file is marked never to be overwritten."""
    source = str(path)
    try:
        data = read_bytes(path)
        if not data.strip():
            raise FormatError("empty file (a ledger starts with 'steelyard = 1')", file=source)
        text = decode(data, source=source)
        if progress is not None:
            progress("parsing", 0.0)
        parsed = parse_toml(text, source=source, fast=fast)
        ledger = ledger_from_data(parsed, source=source, progress=progress)
    except SteelyardError:
        if os.path.isfile(source):
            mark_failed(source)
        raise
    except (RecursionError, MemoryError):
        mark_failed(source)
        raise FormatError("too deeply nested or too large to read", file=source) from None
    mark_loaded(source)
    return LoadedLedger(ledger, source, hashlib.sha256(data).hexdigest(), has_comments(text), time.time())


def load_ledger(path: str | os.PathLike, **kw) -> Ledger:
    return open_ledger(path, **kw).ledger


def disk_changed(loaded: LoadedLedger) -> bool:
    try:
        data = Path(loaded.path).read_bytes()
    except FileNotFoundError:
        return False
    return hashlib.sha256(data).hexdigest() != loaded.sha256


def save_ledger(path: str | os.PathLike, ledger: Ledger, *, loaded: LoadedLedger | None = None,
                allow_comment_loss: bool = False, overwrite_changed: bool = False) -> LoadedLedger:
    """Write the ledger canonically and atomically; returns the new on-disk record.

    With `loaded` (what this session read from the same path) the save stops
    with `ChangedOnDisk` if the file changed meanwhile, and with
    `CommentsWouldBeLost` if the file had comments, unless told otherwise.
    """
    target = str(path)
    same = loaded is not None and os.path.realpath(loaded.path) == os.path.realpath(target)
    if same and not overwrite_changed and disk_changed(loaded):
        raise ChangedOnDisk("changed on disk since it was opened; reload or save elsewhere", file=target)
    if same and loaded.had_comments and not allow_comment_loss:
        raise CommentsWouldBeLost("saving rewrites the file in canonical form and drops its comments",
                                  file=target)
    text = ledger_to_toml(ledger)
    data = text.encode("utf-8")
    write_atomic(target, data)
    return LoadedLedger(ledger, target, hashlib.sha256(data).hexdigest(), False, time.time())
