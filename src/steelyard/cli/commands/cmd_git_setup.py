"""`steelyard git-setup`: register the ledger merge and diff drivers with git, in this repository.

git learns about a custom driver in two places: `.gitattributes` says which
files use it (`*.toml merge=steelyard diff=steelyard`, committed, so every
clone agrees), and the repository's own config says what each driver runs
(local, never committed: git does not run commands a clone brings along).
So every engineer runs this once per clone. Running it again changes
nothing; it says what it wrote and what was already there.
"""

from __future__ import annotations

import os
import shlex
import shutil
import subprocess

NAME = "git-setup"
HELP = "register steelyard's merge driver and diff driver for ledgers in this git repository (.gitattributes, config)"
DESCRIPTION = (
    "In the git repository around the current directory: add '<pattern> merge=steelyard diff=steelyard' to "
    "the top-level .gitattributes, and set in the repository's config merge.steelyard.driver (steelyard "
    "merge %O %A %B), diff.steelyard.command (the semantic diff in `git diff`), diff.steelyard.textconv "
    "(the canonical text for `git log -p` and `git show`) and diff.steelyard.xfuncname. Idempotent; prints "
    "what it wrote. See docs/git.md.")

ATTRIBUTES = "merge=steelyard diff=steelyard"
#: hunk headers in a line diff of the canonical text name the item, loadout or envelope
XFUNCNAME = r'^((id|name) = ".*")$'


def add_arguments(p) -> None:
    p.add_argument("--pattern", default="*.toml",
                   help="which files are ledgers, as a .gitattributes pattern (default '*.toml'; TOML files "
                        "that are not ledgers are merged line by line, as git would)")
    p.add_argument("--command", default="steelyard", metavar="CMD",
                   help="how git should run steelyard (default 'steelyard'; e.g. the full path of a virtual "
                        "environment's steelyard)")


def _git(*args: str, cwd: str | None = None) -> subprocess.CompletedProcess:
    from steelyard.core.errors import SteelyardError

    git = shutil.which("git")
    if git is None:
        raise SteelyardError("git is not on PATH")
    return subprocess.run([git, *args], capture_output=True, text=True, cwd=cwd)


def settings(command: str) -> dict[str, str]:
    """The git config keys and values the drivers need."""
    return {
        "merge.steelyard.name": "steelyard: ledger merge by item id and field",
        "merge.steelyard.driver": f"{command} merge %O %A %B --path %P",
        "diff.steelyard.command": f"{command} git-diff",
        "diff.steelyard.textconv": f"{command} git-diff --text",
        "diff.steelyard.xfuncname": XFUNCNAME,
    }


def _attributes(top: str, pattern: str) -> str:
    """Add the pattern's line to .gitattributes unless it is there; what was done, in words."""
    from steelyard.io.durability.atomic import write_atomic

    path = os.path.join(top, ".gitattributes")
    line = f"{pattern} {ATTRIBUTES}"
    try:
        with open(path, encoding="utf-8") as fh:
            text = fh.read()
    except FileNotFoundError:
        text = ""
    if any(existing.split() == line.split() for existing in text.splitlines()):
        return f".gitattributes: already has '{line}'"
    new = text + ("\n" if text and not text.endswith("\n") else "") + line + "\n"
    write_atomic(path, new.encode("utf-8"))
    return f".gitattributes: added '{line}' (commit it, so every clone merges ledgers the same way)"


def run(args) -> int:
    from steelyard.core.errors import SteelyardError

    if not args.pattern.strip() or any(c.isspace() for c in args.pattern):
        raise SteelyardError(f"must be one .gitattributes pattern without spaces, got {args.pattern!r}",
                             field="--pattern")
    found = _git("rev-parse", "--show-toplevel")
    if found.returncode != 0:
        raise SteelyardError("not inside a git repository (run it in the clone whose ledgers git should merge)")
    top = found.stdout.strip()
    print(_attributes(top, args.pattern))
    for key, value in settings(args.command).items():
        now = _git("config", "--local", "--get", key, cwd=top)
        if now.returncode == 0 and now.stdout.rstrip("\n") == value:
            print(f"git config {key}: already '{value}'")
            continue
        done = _git("config", "--local", key, value, cwd=top)
        if done.returncode != 0:
            raise SteelyardError(f"git config {key} failed: {done.stderr.strip()[:200]}")
        print(f"git config {key} = '{value}'")
    first = shlex.split(args.command)[0] if args.command.strip() else ""
    if not shutil.which(first):
        print(f"note: '{first}' is not on PATH here; git will not find it unless it is where git runs "
              "(give --command with its full path)")
    return 0
