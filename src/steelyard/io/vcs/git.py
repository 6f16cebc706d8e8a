"""Running git: explicit arguments, `git -C <folder>`, LC_ALL=C, a timeout, one-line errors.

The environment drops the variables that point git at a particular
repository (a hook sets GIT_DIR, say), so the repository is always the one
the ledger's folder is in.
"""

from __future__ import annotations

import os
import subprocess

from steelyard.core.errors import SteelyardError

#: seconds one short git command may take (rev-parse, a blob, a log)
TIMEOUT = 60.0
#: variables that would make git read another repository than the file's own
_REPOSITORY_VARIABLES = ("GIT_DIR", "GIT_WORK_TREE", "GIT_INDEX_FILE", "GIT_COMMON_DIR", "GIT_PREFIX",
                         "GIT_NAMESPACE", "GIT_CEILING_DIRECTORIES")


class GitFailed(SteelyardError):
    """git ran and said no; `reason` is its last message line, without "fatal: "."""

    def __init__(self, reason: str, *, file: str | None = None) -> None:
        super().__init__(reason, file=file)
        self.reason = reason


def git_env() -> dict[str, str]:
    env = {k: v for k, v in os.environ.items() if k not in _REPOSITORY_VARIABLES}
    env["LC_ALL"] = "C"  # the messages matched below are git's English ones
    env["GIT_TERMINAL_PROMPT"] = "0"  # never wait for a password
    env["GIT_OPTIONAL_LOCKS"] = "0"  # a reader takes no lock in the repository
    return env


def git_argv(folder: str, *args: str) -> list[str]:
    """The command line: settings that keep the output plain come first."""
    return ["git", "-C", folder, "-c", "core.quotePath=false", "-c", "log.showSignature=false",
            "-c", "color.ui=false", *args]


def reason_of(stderr: bytes) -> str:
    """git's last message line, without its "fatal: " or "error: " prefix."""
    lines = [ln.strip() for ln in stderr.decode("utf-8", "replace").splitlines() if ln.strip()]
    if not lines:
        return "git failed"
    last = lines[-1]
    for prefix in ("fatal: ", "error: "):
        if last.startswith(prefix):
            return last[len(prefix):]
    return last


def start_failure(exc: OSError, file: str) -> SteelyardError:
    """git could not be started at all."""
    if isinstance(exc, FileNotFoundError):
        return SteelyardError("git is not installed (FILE@REV and trend read the repository with it)", file=file)
    return SteelyardError(f"cannot run git ({exc.strerror or exc})", file=file)


def run_git(folder: str, *args: str, file: str, timeout: float = TIMEOUT) -> bytes:
    """git's standard output; `GitFailed` on a non-zero exit, a SteelyardError when git cannot run.

    `file` is what the user typed, named in every message.
    """
    try:
        done = subprocess.run(git_argv(folder, *args), stdin=subprocess.DEVNULL, capture_output=True,
                              env=git_env(), timeout=timeout, check=False)
    except subprocess.TimeoutExpired:
        raise SteelyardError(f"git took longer than {timeout:g} s; nothing was read", file=file) from None
    except OSError as exc:
        raise start_failure(exc, file) from None
    if done.returncode != 0:
        raise GitFailed(reason_of(done.stderr), file=file)
    return done.stdout
