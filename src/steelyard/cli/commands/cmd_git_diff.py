"""`steelyard git-diff`: a ledger's changes as git shows them (set up by `steelyard git-setup`).

Two of git's hooks, two uses:

- external diff (`diff.steelyard.command`): `git diff` calls it with
  `PATH OLD-FILE OLD-HEX OLD-MODE NEW-FILE NEW-HEX NEW-MODE` and shows what
  it prints: here the semantic diff (`steelyard diff`: items added, removed
  and changed by id, the effect on mass, CG and margins, the definitions).
  git stops at a non-zero exit, so this always exits 0; a side that is not a
  readable ledger is shown as a plain line diff instead, with the reason.
- textconv (`diff.steelyard.textconv`, `--text FILE`): for `git log -p`,
  `git show` and `git diff --no-ext-diff`, which line-diff two texts: the
  ledger in the one writer's canonical form, so only changes of content
  show (not comments or layout) and each item is one short block.
"""

from __future__ import annotations

import difflib
import sys

NAME = "git-diff"
HELP = "for git: a ledger's semantic diff as `git diff` output (external diff), or --text FILE (textconv)"
DESCRIPTION = (
    "Called by git once `steelyard git-setup` has registered it: with git's seven external-diff arguments "
    "(PATH OLD-FILE OLD-HEX OLD-MODE NEW-FILE NEW-HEX NEW-MODE) it prints the semantic diff of the two "
    "versions, as `steelyard diff` does, and exits 0; with --text FILE it prints the ledger in canonical "
    "form for git's textconv. A file that is not a readable ledger is shown as text.")

NULL = "/dev/null"


def add_arguments(p) -> None:
    p.add_argument("args", nargs="+", metavar="ARG",
                   help="git's: PATH OLD-FILE OLD-HEX OLD-MODE NEW-FILE NEW-HEX NEW-MODE; with --text: FILE")
    p.add_argument("--text", action="store_true", help="print FILE in canonical form (git's textconv)")
    p.add_argument("--units", choices=("si", "us"), help="display units (default: the ledger's own)")


def _text_of(path: str) -> str:
    if path == NULL:
        return ""
    with open(path, "rb") as fh:
        return fh.read().decode("utf-8", errors="replace")


def _ledger(path: str, label: str):
    from steelyard.io.ledger.file import read_bytes
    from steelyard.io.ledger.read import ledger_from_data
    from steelyard.io.ledger.toml_read import decode, parse_toml

    text = decode(read_bytes(path), source=label)
    return ledger_from_data(parse_toml(text, source=label), source=label)


def canonical(path: str) -> str:
    """The ledger at `path` as the one writer writes it; any other file as it is."""
    from steelyard.core.errors import SteelyardError
    from steelyard.io.ledger.write import ledger_to_toml

    try:
        return ledger_to_toml(_ledger(path, path))
    except SteelyardError:
        return _text_of(path)


def _line_diff(old: str, new: str, a: str, b: str) -> None:
    lines = difflib.unified_diff(_text_of(old).splitlines(keepends=True), _text_of(new).splitlines(keepends=True),
                                 a if old != NULL else NULL, b if new != NULL else NULL)
    for line in lines:
        sys.stdout.write(line if line.endswith("\n") else line + "\n\\ No newline at end of file\n")


def _semantic(old: str, new: str, a: str, b: str, units: str | None) -> None:
    from steelyard.cli.render.diff import print_diff, safe
    from steelyard.core.document.model import Ledger
    from steelyard.core.errors import SteelyardError
    from steelyard.core.history.diff import compare

    try:
        la = Ledger() if old == NULL else _ledger(old, a)
        lb = Ledger() if new == NULL else _ledger(new, b)
        diff = compare(la, None, lb, None)
    except SteelyardError as exc:
        print(safe(f"(shown as text: {exc})"))
        _line_diff(old, new, a, b)
        return
    if diff.identical:
        print("no differences in meaning; the text differs in comments or layout only:")
        _line_diff(old, new, a, b)
        return
    print_diff(diff, NULL if old == NULL else a, NULL if new == NULL else b, units, 50,
               (lb if new != NULL else la).units)


def run(args) -> int:
    from steelyard.core.errors import SteelyardError

    if args.text:
        if len(args.args) != 1:
            raise SteelyardError("--text takes one FILE", field="--text")
        sys.stdout.write(canonical(args.args[0]))
        return 0
    if len(args.args) == 1:  # git's call for an unmerged path
        print(f"* unmerged: {args.args[0]}")
        return 0
    if len(args.args) not in (7, 9):
        raise SteelyardError(f"expects git's 7 external-diff arguments, got {len(args.args)}")
    path, old, _, _, new = args.args[:5]
    new_path = args.args[7] if len(args.args) == 9 else path
    a, b = f"a/{path}", f"b/{new_path}"
    print(f"steelyard diff {a} {b}")
    _semantic(old, new, a, b, args.units)
    return 0
