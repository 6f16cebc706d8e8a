"""Real git repositories for tests: fixed dates, local identity, nothing from the user's git set-up.

Commits carry GIT_AUTHOR_DATE and GIT_COMMITTER_DATE, so dates in the
history are known to the test. Expected values are read back through git
itself (`show`, `log`, `rev-parse`), never through steelyard.
"""

from __future__ import annotations

import os
import subprocess
from pathlib import Path

_DROP = ("GIT_DIR", "GIT_WORK_TREE", "GIT_INDEX_FILE", "GIT_COMMON_DIR", "GIT_PREFIX", "GIT_CEILING_DIRECTORIES")


def _env(date: str | None = None) -> dict[str, str]:
    env = {k: v for k, v in os.environ.items() if k not in _DROP}
    env.update(LC_ALL="C", GIT_CONFIG_NOSYSTEM="1", GIT_CONFIG_GLOBAL=os.devnull)
    if date is not None:
        env.update(GIT_AUTHOR_DATE=date, GIT_COMMITTER_DATE=date)
    return env


def git(repo: Path, *args: str, date: str | None = None) -> str:
    """Run git in `repo`; its stdout (raises on failure)."""
    out = subprocess.run(["git", "-C", str(repo), *args], capture_output=True, text=True, env=_env(date),
                         check=True)
    return out.stdout


def git_bytes(repo: Path, *args: str) -> bytes:
    return subprocess.run(["git", "-C", str(repo), *args], capture_output=True, env=_env(), check=True).stdout


def init_repo(path: Path) -> Path:
    path.mkdir(parents=True, exist_ok=True)
    git(path, "init", "-q", "-b", "main")
    git(path, "config", "user.name", "Test Author")
    git(path, "config", "user.email", "author@example.invalid")
    git(path, "config", "commit.gpgsign", "false")
    return path


def commit(repo: Path, files: dict[str, str], message: str, date: str) -> str:
    """Write `files` (path relative to repo: text), commit them at `date` (ISO 8601); the full hash."""
    for name, text in files.items():
        target = repo / name
        target.parent.mkdir(parents=True, exist_ok=True)
        target.write_text(text)
        git(repo, "add", "--", name)
    git(repo, "commit", "-q", "-m", message, date=date)
    return git(repo, "rev-parse", "HEAD").strip()
