"""`FILE@REV`: a file as committed at a git revision.

A command-line ledger `ledger.toml@HEAD~3` is FILE `ledger.toml` at REV
`HEAD~3`. The rule, so that paths with '@' in them keep working: a path that
exists is a path; otherwise the text is cut at the first '@' whose left part
is an existing file, else at the first '@' whose left part names a file in
an existing folder (a ledger deleted since that revision). REV is anything
`git rev-parse` takes that names a commit (`HEAD~3`, `v1.2`, a hash, a
branch).

A `Revision` is resolved once (repository, full commit hash, the file's
path inside the repository) and reads its bytes as committed, never from
the working tree. `Revision.relative` names another file at the same commit,
relative to this one: what assemblies will need.
"""

from __future__ import annotations

import os
import posixpath
from dataclasses import dataclass

from steelyard.core.errors import SteelyardError
from steelyard.io.vcs.git import GitFailed, run_git


def _cuts(text: str) -> list[int]:
    return [i for i, ch in enumerate(text) if ch == "@" and 0 < i < len(text) - 1]


def split_revision(text: str | os.PathLike) -> tuple[str, str] | None:
    """(FILE, REV) when `text` is FILE@REV; None for a plain path (see the module docstring)."""
    text = os.fspath(text)
    if not isinstance(text, str) or "@" not in text or os.path.lexists(text):
        return None
    cuts = _cuts(text)
    for i in cuts:
        if os.path.isfile(text[:i]):
            return text[:i], text[i + 1:]
    for i in cuts:
        head = text[:i]
        name = os.path.basename(head)
        if name not in ("", ".", "..") and os.path.isdir(os.path.dirname(head) or "."):
            return head, text[i + 1:]
    return None


def names_revision(text: str | os.PathLike) -> bool:
    """True when `text` is an existing file's FILE@REV (a write to it must be refused)."""
    text = os.fspath(text)
    if not isinstance(text, str) or "@" not in text or os.path.lexists(text):
        return False
    return any(os.path.isfile(text[:i]) for i in _cuts(text))


def _check_rev(rev: str, spec: str) -> None:
    if not rev or rev.startswith("-") or any(ch < " " or ch == "\x7f" for ch in rev):
        raise SteelyardError(f"{rev!r} is not a revision name (FILE@REV: e.g. ledger.toml@HEAD~3)", file=spec)


@dataclass(frozen=True)
class Revision:
    """One file at one commit: `path` and `rev` as typed, `commit` (full hash) in the repository at `root`."""

    spec: str  # what was typed, named in messages: "ledger.toml@HEAD~3"
    path: str  # the file part, as typed
    rev: str  # the revision part, as typed
    commit: str  # full hash of the commit REV names
    root: str  # the repository's top folder
    name: str  # the file inside the repository, '/'-separated ("vehicles/ledger.toml")

    @property
    def short(self) -> str:
        return self.commit[:10]

    def read(self) -> bytes:
        """The file's bytes as committed (no filters, no working-tree changes)."""
        try:
            return run_git(self.root, "cat-file", "blob", f"{self.commit}:{self.name}", file=self.spec)
        except GitFailed as exc:
            raise SteelyardError(self.unreadable(exc.reason), file=self.spec) from None

    def unreadable(self, reason: str) -> str:
        """Why git gave no file, in the user's terms."""
        if "does not exist" in reason or "but not in" in reason or "not a valid object name" in reason.lower():
            return f"no file {self.name!r} in revision {self.rev!r} (commit {self.short})"
        if "bad file" in reason:
            return f"{self.name!r} is not a file in revision {self.rev!r} (commit {self.short})"
        return f"cannot read {self.name!r} in revision {self.rev!r}: {reason}"

    def relative(self, other: str) -> "Revision":
        """Another file at the same commit, `other` relative to this file's folder ('/'-separated)."""
        if not other or "\x00" in other or other.startswith("/"):
            raise SteelyardError(f"{other!r} is not a relative file path", file=self.spec)
        name = posixpath.normpath(posixpath.join(posixpath.dirname(self.name), other))
        if name == ".." or name.startswith("../"):
            raise SteelyardError(f"{other!r} is outside the repository", file=self.spec)
        path = os.path.join(os.path.dirname(self.path), *other.split("/"))
        return Revision(f"{path}@{self.rev}", path, self.rev, self.commit, self.root, name)


def repository_of(path: str, *, spec: str) -> tuple[str, str]:
    """(repository top folder, the file's path inside it) of a file path (which need not exist)."""
    folder = os.path.dirname(os.path.abspath(path))
    if not os.path.isdir(folder):
        raise SteelyardError("no such folder", file=spec)
    try:
        out = run_git(folder, "rev-parse", "--show-toplevel", "--show-prefix", file=spec)
    except GitFailed as exc:
        if "not a git repository" in exc.reason:
            raise SteelyardError("not in a git repository (FILE@REV and trend read a file as committed)",
                                 file=spec) from None
        raise
    lines = out.decode("utf-8", "surrogateescape").split("\n")
    if len(lines) < 2 or not lines[0]:
        raise SteelyardError("inside a git folder with no working tree; name the file in a working tree",
                             file=spec)
    return lines[0], lines[1] + os.path.basename(path)


def resolve_commit(root: str, rev: str, *, spec: str) -> str:
    """The full hash of the commit `rev` names, or an error naming `rev`."""
    _check_rev(rev, spec)
    try:
        out = run_git(root, "rev-parse", "--verify", "--quiet", "--end-of-options", f"{rev}^{{commit}}",
                      file=spec)
    except GitFailed:
        raise SteelyardError(f"unknown revision {rev!r} (no commit by that name in the repository at "
                             f"{root})", file=spec) from None
    return out.decode("ascii").strip()


def resolve(path: str, rev: str, *, spec: str | None = None) -> Revision:
    """`path` at `rev`, resolved (repository, commit); nothing is read yet."""
    spec = spec if spec is not None else f"{path}@{rev}"
    root, name = repository_of(path, spec=spec)
    if "\n" in name:
        raise SteelyardError("a file name with a line break cannot be read at a revision", file=spec)
    return Revision(spec, path, rev, resolve_commit(root, rev, spec=spec), root, name)


def revision_of(text: str | os.PathLike) -> Revision | None:
    """The resolved `Revision` when `text` is FILE@REV, else None (a plain path)."""
    cut = split_revision(text)
    if cut is None:
        return None
    spec = os.fspath(text)
    path, rev = cut
    if os.path.isfile(path):
        return resolve(path, rev, spec=spec)
    try:  # the FILE part is not on disk: a ledger deleted since, or just a missing file with '@' in its name
        return resolve(path, rev, spec=spec)
    except SteelyardError as exc:
        raise SteelyardError(f"no such file (nor, read as FILE@REV, {exc.message})", file=spec) from None
