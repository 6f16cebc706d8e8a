"""One test at a time, across pytest-xdist workers, for tests that must not share the machine.

A test that fsyncs in a storm (SIGKILLs of saving processes) makes every other
process's fsync wait seconds; a test that drives the real program in tmux then
sees its keys answered late and times out. Both kinds take this lock, so they
never run side by side; other tests still do.
"""

from __future__ import annotations

import fcntl
import os
import tempfile
from contextlib import contextmanager
from pathlib import Path
from typing import Iterator


@contextmanager
def one_at_a_time(name: str = "disk-and-terminal") -> Iterator[None]:
    """Hold an exclusive lock shared by every worker of this user's test runs (released on exit, or when the
    process dies)."""
    path = Path(tempfile.gettempdir()) / f"steelyard-tests-{os.getuid()}-{name}.lock"
    with open(path, "a") as f:
        fcntl.flock(f, fcntl.LOCK_EX)
        try:
            yield
        finally:
            fcntl.flock(f, fcntl.LOCK_UN)
