"""Ledgers as committed: `FILE@REV` opened like a file, and a file's versions across its history.

Both read git's bytes with the same strict reader as a file on disk
(`io.ledger`), so a committed ledger says exactly what it would say checked
out. A `RevisionLedger` is a `LoadedLedger` whose `path` is FILE@REV as
typed: every message names it, and nothing is ever written back to it (the
working file is not touched, not even marked).
"""

from __future__ import annotations

import datetime as dt
import hashlib
import os
import time
from collections.abc import Iterator
from dataclasses import dataclass

from steelyard.core.document.model import Ledger
from steelyard.core.errors import SteelyardError
from steelyard.core.history.trend import Trend, Version, trend
from steelyard.io.ledger.file import LoadedLedger, has_comments, ledger_from_bytes  # noqa: F401 (tests patch it here)
from steelyard.io.ledger.read import Progress
from steelyard.io.vcs.history import BlobBatch, Commit, commits_touching
from steelyard.io.vcs.revision import Revision, repository_of, revision_of

#: hex digits of a commit hash in labels ("ledger.toml@3f2a9c01d4")
SHORT = 10


@dataclass(frozen=True)
class RevisionLedger(LoadedLedger):
    """A ledger read at a revision; `revision` says which (and reads other files at the same commit)."""

    revision: Revision | None = None




def open_at(revision: Revision, *, progress: Progress | None = None, fast: bool = True) -> RevisionLedger:
    """Read and check the ledger `revision` names."""
    from steelyard.io.ledger.tree import RevisionSource

    data = revision.read()
    ledger, text = ledger_from_bytes(data, source=revision.spec, progress=progress, fast=fast,
                                     tree_source=RevisionSource(revision))  # its assemblies at the same commit
    return RevisionLedger(ledger, revision.spec, hashlib.sha256(data).hexdigest(), has_comments(text),
                          time.time(), revision=revision)


def open_spec(text: str | os.PathLike, *, progress: Progress | None = None,
              fast: bool = True) -> RevisionLedger | None:
    """The ledger FILE@REV names, or None when `text` is a plain path (the hook in `open_ledger`)."""
    revision = revision_of(text)
    return None if revision is None else open_at(revision, progress=progress, fast=fast)


@dataclass(frozen=True)
class FileHistory:
    """Where a file's history comes from: repository, the file's name in it, the newest commit looked at."""

    spec: str
    path: str
    root: str
    name: str
    start: str  # "HEAD", or the commit FILE@REV named


def file_history(text: str) -> FileHistory:
    """The history to follow for FILE (up to HEAD) or FILE@REV (up to that commit)."""
    revision = revision_of(text)
    if revision is not None:
        return FileHistory(text, revision.path, revision.root, revision.name, revision.commit)
    if not os.path.isfile(text) and os.path.lexists(text):
        raise SteelyardError("is not a file", file=text)
    root, name = repository_of(text, spec=text)
    return FileHistory(text, text, root, name, "HEAD")


def committed(commit: Commit) -> dt.datetime | None:
    try:
        return dt.datetime.fromisoformat(commit.date)
    except ValueError:
        return None


def placed_names(history: FileHistory) -> list[str]:
    """The file and every file it places (at the newest commit looked at), as names in the repository."""
    import posixpath

    names = [history.name]
    try:
        with open(history.path, "rb") as f:
            if b"assembly" not in f.read():  # the checked-out file places nothing: no need to ask git
                return names
    except OSError:
        pass
    try:
        top = open_at(Revision(history.spec, history.path, history.start, history.start, history.root,
                               history.name))
    except SteelyardError:
        return names  # unreadable there: follow the file alone (each version says why it cannot be read)
    folder = posixpath.dirname(history.name)
    for p in top.ledger.placed:
        name = posixpath.normpath(posixpath.join(folder, p.file))
        if name not in names:
            names.append(name)
    return names


def commits_of(history: FileHistory, *, since: dt.datetime | None = None,
               until: dt.datetime | None = None) -> list[Commit]:
    """Commits that changed the file or a file it places, oldest first, committed in [since, until)."""
    out = []
    for c in commits_touching(history.root, placed_names(history), start=history.start, file=history.spec):
        when = committed(c)
        if when is not None and ((since is not None and when < since) or (until is not None and when >= until)):
            continue
        out.append(c)
    return out


def versions(history: FileHistory, commits: list[Commit]) -> Iterator[Version]:
    """The file at each commit, read through one `git cat-file --batch`; keys are blob hashes.

    Each version's `load` parses its bytes (the trend calls it once per blob);
    a commit that deleted the file has a version whose `load` says so.
    """
    from steelyard.io.ledger.read_reuse import ReadMemory

    batch = BlobBatch(history.root, file=history.spec)
    memory = ReadMemory()  # one commit's unchanged item tables are not parsed again for the next
    for commit, blob in zip(commits, batch.read([f"{c.rev}:{history.name}" for c in commits])):
        label = f"{history.path}@{commit.rev[:SHORT]}"
        if blob.data is None:
            why = (f"no file {history.name!r} in this commit (deleted or moved)" if blob.missing == "missing"
                   else f"{history.name!r} is {blob.missing}")
            yield Version(commit.rev, commit.date, commit.subject, None, _failing(label, why))
        else:
            at = Revision(label, history.path, commit.rev, commit.rev, history.root, history.name)
            # a tree's figures also depend on the files it places: its text alone is no key to reuse them by
            key = f"{blob.oid}@{commit.rev}" if b"assembly" in blob.data else blob.oid
            yield Version(commit.rev, commit.date, commit.subject, key, _reader(blob.data, label, at, memory))


def _failing(label: str, why: str):
    def load() -> Ledger:
        raise SteelyardError(why, file=label)
    return load


def _reader(data: bytes, label: str, at: Revision, memory=None):
    def load() -> Ledger:
        from steelyard.io.ledger.tree import RevisionSource

        return ledger_from_bytes(data, source=label, tree_source=RevisionSource(at), memory=memory)[0]
    return load


def trend_of(text: str, *, loadout: str | None = None, group: str = "", since: dt.datetime | None = None,
             until: dt.datetime | None = None) -> Trend:
    """The mass history of FILE (or FILE@REV): one git log, one cat-file, each blob read once."""
    history = file_history(text)
    return trend(versions(history, commits_of(history, since=since, until=until)), loadout=loadout, group=group)
