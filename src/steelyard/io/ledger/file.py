"""Opening and saving ledger files on disk.

`open_ledger` remembers what it read (its hash) so that `save_ledger` can
refuse to overwrite a file someone changed on disk, never write over a file
that failed to load, and write over the file it read keeping that file's
layout (io.ledger.layout: comments, order, blank lines and the text of
every value that did not change). `rewriting` is the one way a command (not
the editor) writes a ledger: it holds the editor's lock while it works and
checks the file's hash again just before the rename.
"""

from __future__ import annotations

import codecs
import gc
import hashlib
import os
import re
import time
from contextlib import contextmanager
from dataclasses import dataclass, replace
from pathlib import Path
from typing import TYPE_CHECKING, Iterator

from steelyard.core.errors import FormatError, SteelyardError
from steelyard.core.document.model import Ledger
from steelyard.io.durability.atomic import (  # noqa: F401 - ChangedOnDisk re-exported for callers
    ABSENT, ChangedOnDisk, check_output, file_sha256, mark_failed, mark_loaded, same_file, writable_check,
    write_atomic,
)
from steelyard.io.ledger.placement_folder import refuse_moved_placements
from steelyard.io.ledger.read import Progress
from steelyard.io.ledger.read_stream import ledger_from_text
from steelyard.io.ledger.snapshot_bytes import file_hashes
from steelyard.io.ledger.toml_read import decode

if TYPE_CHECKING:
    from steelyard.io.durability.lock import Lock

# The writers' modules (layout, the TOML writer, the lock, the journal) are imported where a
# write needs them: a command that only reads starts without them.

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
    had_comments: bool  # for information: a save keeps comments either way
    read_at: float
    #: after a save over the file it read: why its own layout could not be kept ("" when it was)
    not_kept: str = ""
    #: the ledger came from the read cache (io.ledger.cache): never written from before `confirmed_fresh`
    from_cache: bool = False
    #: SHA-256 of the bytes read before a trailing [snapshot] table (io.ledger.snapshot_bytes), None when
    #: the file does not end so or the read came from elsewhere (cache, git): a snapshot check then hashes anew
    content_sha256: str | None = None


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


def ledger_from_bytes(data: bytes, *, source: str, progress: Progress | None = None,
                      fast: bool = True, tree=None, tree_source=None, memory=None) -> tuple[Ledger, str]:
    """(ledger, text) of a ledger file's bytes, checked as strictly as a file on disk.

    Assemblies are read from `tree_source`'s folder (default: the file `source` names). `memory`: see
    io.ledger.read_reuse (item tables unchanged since an earlier reading are not parsed again).
    """
    collecting = gc.isenabled()
    gc.disable()  # the parse tree and the items hold no cycles: collection passes over them are pure cost
    try:
        if not data or data.isspace():  # (not data.strip(): the same test without copying the file)
            raise FormatError("empty file (a ledger starts with 'steelyard = 1')", file=source)
        text = decode(data, source=source)
        return ledger_from_text(text, source=source, progress=progress, fast=fast, tree=tree,
                                tree_source=tree_source, memory=memory), text
    except (RecursionError, MemoryError):
        raise FormatError("too deeply nested or too large to read", file=source) from None
    finally:
        if collecting:
            gc.enable()


def open_ledger(path: str | os.PathLike, *, progress: Progress | None = None,
                fast: bool = True, cache: bool = False, memory=None) -> LoadedLedger:
    """Read and check a ledger file. On any error the file is marked never to be overwritten.

    FILE@REV reads the file as committed at a git revision (`io.vcs`); nothing is marked then.
    With `cache` (read-only uses: never a read a write is made from), an unchanged file and tree
    come from the read cache (io.ledger.cache) and a fresh read is stored there; FILE@REV is
    never cached. `memory` (io.ledger.read_reuse.ReadMemory): a command reading several versions of one
    file passes the same memory to each read, and unchanged item tables are read once.
    """
    spec = os.fspath(path)
    if isinstance(spec, str) and "@" in spec and not os.path.lexists(spec):  # maybe FILE@REV (revision.py)
        from steelyard.io.vcs.ledger_at import open_spec  # here: io.vcs reads ledgers through this module

        at = open_spec(path, progress=progress, fast=fast)
        if at is not None:
            return at
    source = str(path)
    tree = None
    try:
        data = read_bytes(path)
        # once: the cache's key, the disk check's and the entry's; a snapshot's content hash on the way
        sha, content_sha = file_hashes(data)
        if cache:
            hit = _from_cache(source, data, fast, sha)
            if hit is not None:
                return hit
            from steelyard.io.ledger.tree import DiskSource, tree_for

            tree = tree_for(DiskSource(source))  # the same reader the parse would make; it lists what it read
        ledger, text = ledger_from_bytes(data, source=source, progress=progress, fast=fast, tree=tree,
                                         memory=memory)
    except SteelyardError:
        if os.path.isfile(source):
            mark_failed(source)
        raise
    mark_loaded(source)
    loaded = LoadedLedger(ledger, source, sha, has_comments(text), time.time(), content_sha256=content_sha)
    if cache:
        from steelyard.io.ledger import cache as _cache

        _cache.store(source, data, ledger, had_comments=loaded.had_comments, files=tree.files, fast=fast,
                     sha256=sha)
    return loaded


def _from_cache(source: str, data: bytes, fast: bool, sha: str | None = None) -> LoadedLedger | None:
    from steelyard.io.ledger import cache as _cache

    sha = sha or hashlib.sha256(data).hexdigest()
    hit = _cache.lookup(source, data, fast=fast, sha256=sha)
    if hit is None:
        return None
    mark_loaded(source)
    return LoadedLedger(hit.ledger, source, sha, hit.had_comments, time.time(), from_cache=True)


def confirmed_fresh(loaded: LoadedLedger) -> LoadedLedger:
    """The file a cached read came from, read afresh and seen to mean the same: what a write may start from.

    The read cache is for looking; an editor that opened from it calls this before its first save
    (a write never comes from the cache). Raises SteelyardError when the file changed since, or
    when the fresh reading differs (a cache that lied: the save is refused, the edits stay in the journal).
    """
    if not loaded.from_cache:
        return loaded
    fresh = open_ledger(loaded.path, cache=False)
    if fresh.sha256 != loaded.sha256:
        raise SteelyardError("changed on disk since it was opened (from the read cache): reopen it to save; "
                             "your edits are kept in the journal", file=loaded.path)
    from steelyard.io.ledger.cache import same_reading

    if not same_reading(loaded.ledger, fresh.ledger):
        raise SteelyardError("the read cache gave another ledger than the file holds: not saved; reopen it with "
                             "--no-cache (your edits are kept in the journal)", file=loaded.path)
    return replace(fresh, read_at=loaded.read_at)


def cached_open(path: str | os.PathLike, *, fast: bool = True) -> LoadedLedger | None:
    """The ledger at `path` from the read cache if it is there and valid for the file as it is now,
    else None (nothing is parsed; nothing raises). For a quick first look; a write reads afresh."""
    source = os.fspath(path)
    if not isinstance(source, str):
        return None
    try:
        data = read_bytes(source)
    except SteelyardError:
        return None
    return _from_cache(source, data, fast)


def load_ledger(path: str | os.PathLike, **kw) -> Ledger:
    return open_ledger(path, **kw).ledger


def disk_changed(loaded: LoadedLedger) -> bool:
    try:
        data = Path(loaded.path).read_bytes()
    except FileNotFoundError:
        return False
    return hashlib.sha256(data).hexdigest() != loaded.sha256


def _kept_layout(loaded: LoadedLedger | None, ledger: Ledger, canonical: str | None = None) -> tuple[str, str]:
    """(text, why not kept): `ledger` written over the layout of the file `loaded` was read from (its
    comments, order, the text of unchanged values), wherever the text goes, if that file still holds the
    bytes that were read; else the canonical text (`canonical`, when given). Without `loaded`, or from a
    file read at a git revision (FILE@REV: no bytes here to keep), canonical with no reason to give."""
    from steelyard.io.ledger.layout import preserve
    from steelyard.io.ledger.write import ledger_to_toml
    from steelyard.io.vcs.revision import names_revision

    if loaded is None or names_revision(loaded.path):
        return (canonical if canonical is not None else ledger_to_toml(ledger)), ""
    try:
        data = Path(os.path.realpath(loaded.path)).read_bytes()
    except OSError:
        data = b""
    if not data or hashlib.sha256(data).hexdigest() != loaded.sha256:
        why = "the file is not the one that was read" if data else "the file is gone"
        return (canonical if canonical is not None else ledger_to_toml(ledger)), why
    done = preserve(data.decode("utf-8-sig"), loaded.ledger, ledger, canonical=canonical)
    text = "\ufeff" + done.text if data.startswith(codecs.BOM_UTF8) else done.text  # a byte-order mark stays
    return text, done.why if done.how == "canonical" else ""


def save_ledger(path: str | os.PathLike, ledger: Ledger, *, loaded: LoadedLedger | None = None,
                overwrite_changed: bool = False) -> LoadedLedger:
    """Write the ledger atomically; returns the new on-disk record.

    With `loaded` (what this session read) what did not change keeps the
    bytes of the file it was read from: comments, order, blank lines, number
    text (io.ledger.layout), whether the save goes over that file or to
    another (save as). Over the same path the save stops with `ChangedOnDisk`
    if the file changed meanwhile (unless `overwrite_changed`). Without
    `loaded`, from a file changed on disk, or from one read at a git revision
    (FILE@REV), the canonical text is written.
    """
    target = str(path)
    if loaded is not None:
        refuse_moved_placements(ledger, loaded.path, target)
    same = loaded is not None and os.path.realpath(loaded.path) == os.path.realpath(target)
    expect = None
    if same and not overwrite_changed:
        now = file_sha256(os.path.realpath(target))
        if now not in (loaded.sha256, ABSENT):  # a deleted file may be written again
            raise ChangedOnDisk("changed on disk since it was opened; reload or save elsewhere", file=target)
        expect = now  # checked again just before the rename: the text below takes a while on a big ledger
    text, why = _kept_layout(loaded, ledger)
    data = text.encode("utf-8")
    write_atomic(target, data, through_symlink=True, expect_sha256=expect)
    return LoadedLedger(ledger, target, hashlib.sha256(data).hexdigest(), has_comments(text), time.time(), why)


# ------------------------------------------------------------ command writers
class LedgerRewrite:
    """A ledger file a command is writing, its lock held; from `rewriting`."""

    def __init__(self, target: str, in_place: bool, expect: str) -> None:
        self.target = target
        self.in_place = in_place
        self._expect = expect  # the target's hash when the lock was taken (ABSENT: no file)
        self._layout: LoadedLedger | None = None  # the file whose layout the text keeps (see `replaces`)
        self.not_kept = ""  # after `text_for`: why that file's layout could not be kept

    def replaces(self, loaded: LoadedLedger) -> None:
        """Say that what is written comes from `loaded`: call right after loading, before the slow work.

        `text_for` then keeps the layout of the file `loaded` was read from
        (its comments, order, the text of unchanged values), whether the
        result goes back over that file or to another (`-o OUT`): a ledger
        derived from a file keeps what its people wrote there. Over the file
        itself, the write goes ahead only if it still has the bytes that were
        read. A file read at a git revision (FILE@REV) has no bytes here to
        keep: the text is canonical.
        """
        refuse_moved_placements(loaded.ledger, loaded.path, self.target)
        if self.in_place and same_file(loaded.path, self.target):
            self._expect = loaded.sha256
        self._layout = loaded

    def text_for(self, ledger: Ledger, *, canonical: str | None = None) -> str:
        """The text to write for `ledger`: the layout of the file it comes from kept (see `replaces`);
        otherwise canonical (`canonical`, if already made)."""
        text, self.not_kept = _kept_layout(self._layout, ledger, canonical)
        return text

    def write(self, text: str) -> str:
        """Write `text` atomically; refuses (`ChangedOnDisk`) if the file changed since it was read."""
        data = text.encode("utf-8")
        try:
            write_atomic(self.target, data, through_symlink=self.in_place, expect_sha256=self._expect)
        except ChangedOnDisk:
            raise ChangedOnDisk("changed on disk while this command ran (another program wrote it); nothing was "
                                "written, run it again", file=self.target) from None
        self._expect = hashlib.sha256(data).hexdigest()
        return self._expect


def _lock_for_command(target: str) -> Lock:
    """The editor's lock on `target`, or a one-line refusal naming who holds it."""
    from steelyard.io.durability import journal as _journal
    from steelyard.io.durability.lock import Locked, LockRefused, LockUnavailable, acquire, is_stale, take_over

    try:
        return acquire(target)
    except Locked as exc:
        info = exc.info
        stale = is_stale(info)
        if stale and _journal.pending(target) is None:  # a command or editor that died with nothing unsaved
            try:
                return take_over(target, info)
            except Locked as again:
                info, stale = again.info, False
        why = ("that session ended without closing it and left unsaved edits; open the file in the editor to "
               "restore or discard them" if stale else "try again once it is closed, or write elsewhere")
        raise SteelyardError(f"is in use by another steelyard (locked by {info.describe()}); {why}; nothing was "
                             "written", file=target) from None
    except LockRefused:
        raise
    except LockUnavailable as exc:
        if exc.strerror:
            raise SteelyardError(f"cannot write: {exc.strerror}", file=target) from None
        raise


@contextmanager
def rewriting(target: str | os.PathLike, *, source: str | os.PathLike | None = None,
              force: bool = False) -> Iterator[LedgerRewrite]:
    """Hold what a command needs to write the ledger `target` (the one helper every CLI writer uses).

    `source` is the ledger the command reads (None: none); when it is the
    target the file is rewritten in place, through a symlink if it is one.
    Before anything slow: a read-only target is refused unless `force`; any
    other target that is a symlink, a directory or the source is refused;
    the editor's lock is taken (refused if someone holds it); unsaved edits
    waiting in a journal are refused. The lock is released on leaving.
    """
    target = str(target)
    from steelyard.io.vcs.revision import names_revision

    if names_revision(target):  # FILE@REV: a file as committed is read, never written back
        raise SteelyardError("names a ledger as committed at a git revision (FILE@REV), which is never "
                             "written back; write to another file", file=target)
    in_place = source is not None and same_file(source, target)
    if in_place:
        writable_check(target, force=force, what="pass --force to rewrite it anyway")
    else:
        check_output(target, inputs=(source,), force=force, hint="pass --force to replace it anyway")
    lock = _lock_for_command(target)
    try:
        from steelyard.io.durability import journal as _journal

        state = _journal.pending(target)
        if state is not None:
            n = len(state.records)
            raise SteelyardError(f"{n} unsaved edit{'s' if n != 1 else ''} of an editing session wait in its "
                                 "journal; open it in the editor to restore or discard them first", file=target)
        expect = file_sha256(os.path.realpath(target) if in_place else target)
        yield LedgerRewrite(target, in_place, expect)
    finally:
        lock.release()
