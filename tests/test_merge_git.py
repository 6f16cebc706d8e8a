"""Git runs steelyard's drivers: `steelyard git-setup`, then `git merge` and `git diff` in a scratch repository.

Outside references: git itself, and its documentation: gitattributes(5)
("Defining a custom merge driver": the result in %A, exit 0 when clean;
"Defining an external diff driver"; "Performing text diffs of binary files"
for textconv), git-merge(1) ("How conflicts are presented": seven-character
<<<<<<< / ======= / >>>>>>> lines) and git-merge-file(1) for a TOML file that
is not a ledger. Ledger texts are compared as data read by tomllib.
"""

from __future__ import annotations

import os
import shlex
import shutil
import subprocess
import sys

import pytest

from support.cli import run_cli
from support.merge_texts import HEAD, ITEMS, data as _data, merge as _merge


def test_another_toml_file_is_merged_line_by_line_as_git_would(tmp_path):
    assert shutil.which("git") is not None, "git is needed to merge like git (the project's git features need it)"
    base = 'name = "tool"\nversion = "1.0"\n\n[deps]\na = "1"\nb = "1"\n'
    rc, text = _merge(tmp_path, base, base.replace('version = "1.0"', 'version = "1.1"'),
                      base.replace('b = "1"', 'b = "2"'))
    assert rc == 0
    assert _data(text) == {"name": "tool", "version": "1.1", "deps": {"a": "1", "b": "2"}}


# --------------------------------------------------------------------------- git runs the drivers


def _git_env(home) -> dict:
    env = dict(os.environ)
    env.update(HOME=str(home), GIT_CONFIG_NOSYSTEM="1", GIT_AUTHOR_NAME="A. Tester", GIT_AUTHOR_EMAIL="a@example.org",
               GIT_COMMITTER_NAME="A. Tester", GIT_COMMITTER_EMAIL="a@example.org", GIT_PAGER="cat", PAGER="cat")
    env.pop("GIT_DIR", None)
    env.pop("GIT_WORK_TREE", None)
    return env


@pytest.fixture
def repo(tmp_path):
    assert shutil.which("git") is not None, "git is needed to merge like git (the project's git features need it)"
    root = tmp_path / "repo"
    root.mkdir()
    env = _git_env(tmp_path)

    def git(*args, check=True):
        out = subprocess.run(["git", *args], cwd=root, env=env, capture_output=True, text=True)
        if check and out.returncode != 0:
            raise AssertionError(f"git {' '.join(args)}: {out.stdout}{out.stderr}")
        return out

    git("init", "-q", "-b", "main")
    (root / "ledger.toml").write_text(HEAD + ITEMS)
    command = f"{shlex.quote(sys.executable)} -m steelyard"
    setup = subprocess.run([sys.executable, "-m", "steelyard", "git-setup", "--command", command], cwd=root,
                           env=env, capture_output=True, text=True)
    assert setup.returncode == 0, setup.stderr
    git("add", ".")
    git("commit", "-qm", "base")
    return root, git, setup.stdout, command


def _branches(root, git, ours: str, theirs: str) -> None:
    git("checkout", "-qb", "other")
    (root / "ledger.toml").write_text(theirs)
    git("commit", "-qam", "theirs")
    git("checkout", "-q", "main")
    (root / "ledger.toml").write_text(ours)
    git("commit", "-qam", "ours")


def test_git_setup_writes_attributes_and_config_once(repo):
    root, git, said, command = repo
    assert (root / ".gitattributes").read_text() == "*.toml merge=steelyard diff=steelyard\n"
    assert git("config", "--local", "merge.steelyard.driver").stdout.strip() == f"{command} merge %O %A %B --path %P"
    assert "merge.steelyard.driver" in said and ".gitattributes" in said
    before = git("config", "--local", "--list").stdout, (root / ".gitattributes").read_bytes()
    again = subprocess.run([sys.executable, "-m", "steelyard", "git-setup", "--command", command], cwd=root,
                           env=_git_env(root.parent), capture_output=True, text=True)
    assert again.returncode == 0 and "already" in again.stdout
    assert (git("config", "--local", "--list").stdout, (root / ".gitattributes").read_bytes()) == before


def test_git_merge_runs_the_driver_and_keeps_both_fields(repo):
    root, git, _, _ = repo
    _branches(root, git, HEAD + ITEMS.replace("mass = 41.5", "mass = 43.0"),
              HEAD + ITEMS.replace('name = "Main battery"', 'name = "Battery pack"'))
    out = git("merge", "-q", "other", "-m", "merge", check=False)
    assert out.returncode == 0, out.stdout + out.stderr  # git's own line merge would conflict on adjacent lines
    battery = _data((root / "ledger.toml").read_text())["item"][0]
    assert (battery["name"], battery["mass"]) == ("Battery pack", 43.0)


def test_git_merge_of_one_field_both_ways_leaves_markers_the_readers_refuse(repo):
    root, git, _, _ = repo
    _branches(root, git, HEAD + ITEMS.replace("mass = 1.2", "mass = 1.4"),
              HEAD + ITEMS.replace("mass = 1.2", "mass = 1.6"))
    out = git("merge", "other", "-m", "merge", check=False)
    assert out.returncode != 0 and "CONFLICT" in out.stdout
    text = (root / "ledger.toml").read_text()
    marker = next(n for n, line in enumerate(text.splitlines(), start=1) if line.startswith("<<<<<<< "))
    rc, _, err = run_cli("rollup", root / "ledger.toml")
    assert rc == 2 and f"line {marker}: unresolved merge conflict" in err


def test_git_diff_shows_the_semantic_diff_and_log_the_canonical_text(repo):
    root, git, _, _ = repo
    (root / "ledger.toml").write_text(HEAD + ITEMS.replace("mass = 1.2", "mass = 1.7"))
    shown = git("diff").stdout
    assert "1 changed" in shown and "radio" in shown  # steelyard diff's report, not a line diff
    assert not any(line.startswith("-mass") for line in shown.splitlines())
    git("commit", "-qam", "heavier radio")
    log = git("log", "-p", "-1").stdout  # textconv: a line diff of the canonical text
    assert "-mass = 1.2\n+mass = 1.7" in log
