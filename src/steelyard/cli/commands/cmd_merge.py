"""`steelyard merge BASE OURS THEIRS`: three-way merge of a ledger, as a git merge driver.

git's convention: BASE is the common ancestor (%O, empty when there is
none), OURS the current branch's version (%A), THEIRS the other's (%B); the
result is written over OURS. Exit 0: merged cleanly. Exit 1: conflicts,
each disputed entry between git-style markers in OURS (which every reader
then refuses, naming the line). Exit 2: a side cannot be read; OURS is left
untouched and git reports the file as conflicted.

A TOML file that is not a ledger at all (no `steelyard = 1`, e.g. a
pyproject.toml caught by a `*.toml` pattern) gets git's own line merge
(`git merge-file`), so registering the driver for `*.toml` is safe.
"""

from __future__ import annotations

import shutil
import subprocess
import sys

NAME = "merge"
HELP = "three-way merge of a ledger by item id and field (git merge driver); writes OURS; exit 0 clean, 1 conflict"
DESCRIPTION = (
    "Merge OURS and THEIRS, both descended from BASE, writing the result over OURS (git passes %O %A %B). "
    "Items match by id, loadouts, envelopes, limits and sequences by name, allocations by group; a field "
    "changed on one side takes that side's value, so ours changing an item's mass and theirs its name keeps "
    "both. A field changed differently on both sides, an entry added on both with different content, or "
    "removed on one side and changed on the other is a conflict: exit 1, with <<<<<<< ours / ======= / "
    ">>>>>>> theirs around that entry. What neither side changed keeps its text. Exit 2 (OURS untouched) "
    "when a side cannot be read. `steelyard git-setup` registers it with git. See docs/git.md.")


def add_arguments(p) -> None:
    p.add_argument("base", metavar="BASE", help="the common ancestor (an empty file: none)")
    p.add_argument("ours", metavar="OURS", help="our version; the result is written here")
    p.add_argument("theirs", metavar="THEIRS", help="their version")
    p.add_argument("--path", metavar="NAME", help="the file's name in messages (git passes %%P)")
    p.add_argument("--force", action="store_true", help="rewrite OURS even if it is read-only")


def _read(path: str, source: str):
    """(text, parsed TOML or None for an empty file)."""
    from steelyard.io.ledger.file import read_bytes
    from steelyard.io.ledger.toml_read import decode, parse_toml

    text = decode(read_bytes(path), source=source)
    return text, (parse_toml(text, source=source) if text.strip() else None)


def _line_merge(args, label: str) -> int:
    """git's own line merge, for a TOML file that is not a ledger."""
    from steelyard.core.errors import SteelyardError

    git = shutil.which("git")
    if git is None:
        raise SteelyardError("is not a steelyard ledger, and git (for a line merge) is not on PATH", file=label)
    rc = subprocess.run([git, "merge-file", "-L", "ours", "-L", "base", "-L", "theirs", args.ours, args.base,
                         args.theirs]).returncode
    return 0 if rc == 0 else 1 if 0 < rc < 128 else 2


def run(args) -> int:
    from steelyard.core.document.model import Ledger
    from steelyard.core.errors import SteelyardError
    from steelyard.core.history.merge import merge_ledgers
    from steelyard.io.ledger.conflicts import opening_lines
    from steelyard.io.ledger.file import read_bytes, rewriting
    from steelyard.io.ledger.merge_text import merged_text
    from steelyard.io.ledger.read import DOCUMENT, ledger_from_data
    from steelyard.io.ledger.toml_read import parse_toml

    label = args.path or args.ours
    with rewriting(args.ours, source=args.ours, force=args.force) as out:
        raw = {side: read_bytes(getattr(args, side)) for side in ("base", "ours", "theirs")}
        if raw["ours"] == raw["theirs"] or raw["theirs"] == raw["base"]:
            return 0  # OURS already is the result
        names = {side: (f"{args.path} ({side})" if args.path else getattr(args, side))
                 for side in ("base", "ours", "theirs")}
        texts, data = {}, {}
        for side in ("base", "ours", "theirs"):
            texts[side], data[side] = _read(getattr(args, side), names[side])
        if any(d is not None and "steelyard" not in d for d in data.values()):
            return _line_merge(args, label)
        if raw["ours"] == raw["base"]:
            # refuse a broken side before writing (read alone: a merge never reads the files placed)
            ledger_from_data(data["theirs"], source=names["theirs"], tree=DOCUMENT)
            out.write(texts["theirs"])
            return 0
        ledgers = {}
        for side in ("base", "ours", "theirs"):
            if data[side] is None and side != "base":
                raise SteelyardError("empty file (a ledger starts with 'steelyard = 1')", file=names[side])
            ledgers[side] = (Ledger() if data[side] is None
                             else ledger_from_data(data[side], source=names[side], tree=DOCUMENT))
        try:
            result = merge_ledgers(ledgers["base"], ledgers["ours"], ledgers["theirs"])
        except SteelyardError as exc:
            raise exc.located(file=label)
        text = merged_text(texts["ours"], ledgers["ours"], texts["theirs"], ledgers["theirs"], result)
        problem = None
        if result.clean:
            try:
                ledger_from_data(parse_toml(text, source=label), source=label, tree=DOCUMENT)
            except SteelyardError as exc:
                problem = exc
        out.write(text)
    if problem is not None:
        print(f"steelyard: {label}: merged by item id, but the result does not read: {problem}; fix it by hand "
              "before committing", file=sys.stderr)
        return 1
    if result.clean:
        return 0
    for c in result.conflicts:
        print(f"steelyard: {label}: conflict: {c.label}", file=sys.stderr)
    lines = opening_lines(text)
    where = ", ".join(map(str, lines))
    print(f"steelyard: {label}: {len(result.conflicts)} conflict{'s' if len(result.conflicts) != 1 else ''} "
          f"marked at line{'s' if len(lines) > 1 else ''} {where}; keep one side of each and delete the marker "
          "lines", file=sys.stderr)
    return 1
