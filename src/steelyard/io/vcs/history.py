"""A file's history: the commits that changed some paths, and their blobs read in one process.

`commits_touching` is one `git log`; `BlobBatch` is one `git cat-file
--batch` that answers "<commit>:<path>" requests with each blob's hash and
bytes, so a history of hundreds of revisions costs two processes, not
hundreds. A request is written by a thread while the answers are read, so
neither pipe can fill up and stall the other; the reader gives up after
`IDLE_TIMEOUT` seconds without a byte.
"""

from __future__ import annotations

import os
import select
import subprocess
import threading
from collections.abc import Iterator, Sequence
from dataclasses import dataclass

from steelyard.core.errors import SteelyardError
from steelyard.io.vcs.git import TIMEOUT, GitFailed, git_argv, git_env, reason_of, run_git, start_failure

#: seconds `git cat-file --batch` may stay silent before the read is abandoned
IDLE_TIMEOUT = 60.0
_NO_COMMITS = ("does not have any commits", "bad default revision", "unknown revision or path")


@dataclass(frozen=True)
class Commit:
    """One commit as the history shows it."""

    rev: str  # full hash
    date: str  # committer date, ISO 8601 with its offset
    subject: str  # first line of the message


def commits_touching(root: str, names: Sequence[str], *, start: str = "HEAD", file: str) -> list[Commit]:
    """Commits from `start` back that changed any of `names` (paths inside the repository), oldest first.

    A repository without commits yet has no history: [].
    """
    fields = "%H%x1f%cI%x1f%s"
    try:
        out = run_git(root, "log", "-z", "--reverse", "--no-color", "--no-show-signature", f"--format={fields}",
                      "--end-of-options", start, "--", *[f":(literal){n}" for n in names], file=file,
                      timeout=TIMEOUT * 5)
    except GitFailed as exc:
        if any(t in exc.reason for t in _NO_COMMITS) and start == "HEAD":
            return []
        raise
    commits = []
    for record in out.decode("utf-8", "replace").split("\x00"):
        record = record.strip("\n")
        if not record:
            continue
        rev, date, subject = (record.split("\x1f", 2) + ["", ""])[:3]
        commits.append(Commit(rev, date, subject))
    return commits


class _Pipe:
    """Buffered reads from a pipe, each waiting at most `timeout` seconds for more bytes."""

    def __init__(self, fd: int, timeout: float) -> None:
        self.fd, self.timeout, self.buf = fd, timeout, bytearray()

    def _more(self, want: int = 1 << 16) -> None:
        ready, _, _ = select.select([self.fd], [], [], self.timeout)
        if not ready:
            raise TimeoutError
        chunk = os.read(self.fd, max(want, 1 << 16))
        if not chunk:
            raise EOFError
        self.buf += chunk

    def line(self) -> bytes:
        start = 0
        while (end := self.buf.find(b"\n", start)) < 0:
            start = len(self.buf)
            self._more()
        out = bytes(self.buf[:end])
        del self.buf[:end + 1]
        return out

    def exactly(self, n: int) -> bytes:
        while len(self.buf) < n:
            self._more(n - len(self.buf))
        out = bytes(self.buf[:n])
        del self.buf[:n]
        return out


@dataclass(frozen=True)
class Blob:
    """An answer of `BlobBatch`: `oid` and `data` for a file, else `missing` says why there is none."""

    request: str
    oid: str | None
    data: bytes | None
    missing: str | None = None


class BlobBatch:
    """Many "<commit>:<path>" blobs through one `git cat-file --batch` in the repository at `root`."""

    def __init__(self, root: str, *, file: str, idle_timeout: float = IDLE_TIMEOUT) -> None:
        self.root, self.file, self.idle_timeout = root, file, idle_timeout

    def read(self, requests: Sequence[str]) -> Iterator[Blob]:
        """One `Blob` per request, in order."""
        for r in requests:
            if "\n" in r or "\x00" in r:
                raise SteelyardError("a path with a line break cannot be read from git", file=self.file)
        if not requests:
            return
        try:
            proc = subprocess.Popen(git_argv(self.root, "cat-file", "--batch"), stdin=subprocess.PIPE,
                                    stdout=subprocess.PIPE, stderr=subprocess.PIPE, env=git_env())
        except OSError as exc:
            raise start_failure(exc, self.file) from None
        writer = threading.Thread(target=_write_requests, args=(proc, requests), daemon=True)
        writer.start()
        pipe = _Pipe(proc.stdout.fileno(), self.idle_timeout)
        complete = False
        try:
            for r in requests:
                yield self._answer(pipe, r)
            complete = True
        except TimeoutError:
            raise SteelyardError(f"git cat-file gave nothing for {self.idle_timeout:g} s; reading stopped",
                                 file=self.file) from None
        except EOFError:
            proc.kill()
            proc.wait(timeout=TIMEOUT)
            raise SteelyardError(f"git cat-file stopped early: {reason_of(proc.stderr.read())}",
                                 file=self.file) from None
        finally:
            _finish(proc, writer, complete)

    @staticmethod
    def _answer(pipe: _Pipe, request: str) -> Blob:
        header = pipe.line().decode("utf-8", "replace")
        if header.endswith((" missing", " ambiguous")):
            return Blob(request, None, None, header.rsplit(" ", 1)[1])
        parts = header.split(" ")
        if len(parts) != 3 or not parts[2].isdigit():
            raise EOFError
        oid, kind, size = parts[0], parts[1], int(parts[2])
        data = pipe.exactly(size)
        pipe.exactly(1)  # the newline after the content
        if kind != "blob":
            return Blob(request, oid, None, f"a {kind}, not a file")
        return Blob(request, oid, data)


def _write_requests(proc: subprocess.Popen, requests: Sequence[str]) -> None:
    try:
        for r in requests:
            proc.stdin.write(r.encode("utf-8", "surrogateescape") + b"\n")
        proc.stdin.close()
    except (BrokenPipeError, OSError, ValueError):  # git ended (or was ended); the reader reports it
        pass


def _finish(proc: subprocess.Popen, writer: threading.Thread, complete: bool) -> None:
    """Reap git; one whose answers were not all read (an error, a reader that stopped) is ended."""
    if not complete and proc.poll() is None:
        proc.kill()
    if proc.poll() is None:
        try:
            proc.stdin.close()
        except (OSError, ValueError):
            pass
        try:
            proc.wait(timeout=5)
        except subprocess.TimeoutExpired:
            proc.kill()
            proc.wait()
    writer.join(timeout=5)
    for stream in (proc.stdout, proc.stderr):
        try:
            stream.close()
        except OSError:
            pass
