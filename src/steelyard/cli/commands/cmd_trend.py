"""`steelyard trend FILE`: the ledger's mass history, one point per commit that changed it.

Git is asked twice (one `git log` for the commits, one `git cat-file
--batch` for the file at each), and each distinct text is read once. A
commit where the file does not read is shown with its reason in the table
and listed under "skipped" in --json. Exit 0, or 2 on bad input (not in a
repository, an unknown revision, a bad date).
"""

from __future__ import annotations

import datetime as dt
import json
import re
import sys

NAME = "trend"
HELP = "the ledger's mass history from git: mass, predicted mass, allocation and CG at each commit"
DESCRIPTION = (
    "One point per commit that changed FILE (commits that did not are left out), oldest first: commit "
    "date, hash, subject, basic mass, predicted mass (growth allowance), the whole-vehicle allocation "
    "and its margin (allocation - predicted), and the CG; with --group, that group and its subgroups "
    "against its own allocation. FILE@REV follows the history up to REV. A table and a chart; --json "
    "gives {\"points\": [...], \"skipped\": [...]} in SI. See docs/git.md.")

_DATE_ONLY = re.compile(r"^\s*\d{4}-\d{2}-\d{2}\s*$")


def add_arguments(p) -> None:
    from steelyard.cli.unit_options import add_unit_options

    p.add_argument("file", help="ledger file (TOML) in a git repository, or FILE@REV (history up to REV)")
    p.add_argument("--loadout", metavar="NAME", help="apply this loadout (default: variable items empty)")
    p.add_argument("--group", metavar="PATH", help="one group and its subgroups instead of the whole vehicle")
    p.add_argument("--since", metavar="DATE", help="commits from this date/time on (ISO 8601, UTC if no zone)")
    p.add_argument("--until", metavar="DATE",
                   help="commits up to this date/time (ISO 8601; a date alone includes that whole day)")
    p.add_argument("--json", action="store_true", help="one JSON object on stdout, SI units")
    add_unit_options(p)


def _times(args) -> tuple[dt.datetime | None, dt.datetime | None]:
    from steelyard.core.errors import SteelyardError
    from steelyard.io.report.build import parse_time

    since = parse_time(args.since, what="--since") if args.since else None
    until = None
    if args.until:
        until = parse_time(args.until, what="--until")
        if _DATE_ONLY.match(args.until):
            until += dt.timedelta(days=1)  # --until 2026-03-01 takes in all of 1 March
    if since is not None and until is not None and until <= since:
        raise SteelyardError("is not after --since", field="--until")
    return since, until


def run(args) -> int:
    from steelyard.core.display import DisplayUnits
    from steelyard.core.document.model import FileUnits
    from steelyard.io.vcs.ledger_at import trend_of
    from steelyard.io.report.trend_text import print_trend, trend_record

    since, until = _times(args)
    group = (args.group or "").strip("/")
    t = trend_of(args.file, loadout=args.loadout, group=group, since=since, until=until)
    if args.json:
        json.dump(trend_record(t), sys.stdout, indent=2, allow_nan=False)
        sys.stdout.write("\n")
        return 0
    du = DisplayUnits.choose(t.units or FileUnits(), args.units)
    print_trend(t, args.file, du)
    return 0
