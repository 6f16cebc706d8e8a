"""`steelyard snapshot FILE`: freeze one configuration; `--verify` checks one.

Exit codes: 0 written (or verified); 2 bad input, including a snapshot whose
content no longer matches its hash or whose totals no longer match its items.
"""

from __future__ import annotations

import os
import sys

NAME = "snapshot"
HELP = "freeze one loadout as a self-contained, checkable ledger; --verify checks a snapshot"
DESCRIPTION = (
    "Write the configuration of FILE under --loadout (default: variable items empty) as a snapshot: "
    "a valid ledger in SI units of fixed items as carried, with a [snapshot] table holding the time, "
    "author, source, totals, envelope status and a content hash. Without -o it goes to stdout. "
    "--verify FILE recomputes the hash and the totals of a snapshot: exit 0 when they match, "
    "2 (one-line message) when not.")


def add_arguments(p) -> None:
    p.add_argument("file", help="ledger file (TOML); with --verify, a snapshot")
    p.add_argument("--loadout", metavar="NAME", help="the loadout to freeze (default: variable items empty)")
    p.add_argument("-o", "--output", metavar="OUT", help="write the snapshot to OUT (default: stdout)")
    p.add_argument("--force", action="store_true", help="overwrite OUT if it exists")
    p.add_argument("--verify", action="store_true", help="check that FILE is an unaltered snapshot")


def _author() -> str:
    import getpass

    try:
        return getpass.getuser()
    except (OSError, KeyError, ImportError):
        return "unknown"


def _verify(args) -> int:
    from steelyard.core.errors import SteelyardError
    from steelyard.io.ledger.snapshot import verify_loaded
    from steelyard.cli.loading import load_for_cli

    if args.loadout or args.output or args.force:
        raise SteelyardError("takes only FILE (a snapshot is one configuration already)", field="--verify")
    loaded = load_for_cli(args.file)
    info = verify_loaded(loaded)
    what = f"loadout {info.loadout!r}" if info.loadout else "no loadout"
    from steelyard.cli.render.diff import safe

    print(safe(f"{loaded.path}: snapshot verified ({what}, taken {info.taken} by {info.author or 'unknown'}, "
               f"content sha256 {info.content_sha256[:12]}…)"))
    from steelyard.io.ledger.snapshot_sources import source_changes

    for line in source_changes(loaded.ledger, loaded.path):  # the files it was taken from, as they are now
        print(safe(f"{loaded.path}: {line}"))
    return 0


def _text(args):
    """(loaded, snapshot text) of FILE under --loadout; an altered snapshot is never re-issued."""
    from steelyard.io.ledger.snapshot import snapshot_info, snapshot_text, verify_loaded
    from steelyard.cli.loading import check_loadout, load_for_cli, located

    loaded = load_for_cli(args.file, cache=False)  # a ledger (file or stdout) is made from it: read afresh
    if snapshot_info(loaded.ledger, file=loaded.path) is not None:
        verify_loaded(loaded)  # never re-issue an altered snapshot
    check_loadout(loaded, args.loadout)
    with located(loaded):
        return loaded, snapshot_text(loaded.ledger, args.loadout, source=loaded.path, author=_author(),
                                     source_sha256=loaded.sha256)


def run(args) -> int:
    from steelyard.core.errors import SteelyardError
    from steelyard.io.durability.atomic import same_file
    from steelyard.io.ledger.file import rewriting

    if args.verify:
        return _verify(args)
    out = args.output
    if out is None:
        _, text = _text(args)
        sys.stdout.write(text)
        return 0
    if os.path.exists(out) and os.path.exists(args.file) and same_file(out, args.file):
        raise SteelyardError("is the source ledger; write the snapshot to another file", file=out,
                             field="--output")
    if os.path.isdir(out):
        raise SteelyardError("is a directory, not a file", file=out, field="--output")
    if os.path.lexists(out) and not args.force:
        raise SteelyardError("exists; --force overwrites it", file=out, field="--output")
    # a snapshot is a ledger: written like every other ledger a command writes (no symlink, the editor's
    # lock, no unsaved journal edits, the file unchanged since the lock was taken)
    with rewriting(out, source=args.file, force=args.force) as w:
        loaded, text = _text(args)
        w.write(text)
    what = f"loadout {args.loadout!r}" if args.loadout else "no loadout (variable items empty)"
    from steelyard.cli.render.diff import safe

    print(safe(f"{out}: snapshot of {loaded.path}, {what}"))
    return 0
