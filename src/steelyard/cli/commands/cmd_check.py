"""`steelyard check FILE`: every loadout and sequence against every envelope and limit.

Exit 0 when every check that applies holds, 1 when any limit is broken, 2 on
bad input (main maps a SteelyardError to one line and exit 2). Made for CI:
`steelyard check ledger.toml --all` fails the build when a change breaks a limit.
"""

from __future__ import annotations

import json
import sys

NAME = "check"
HELP = "check every loadout and sequence against every envelope and limit (exit 1 if any is broken)"
DESCRIPTION = (HELP + ". Each loadout is checked as loaded and, when the file names its fuel, at zero fuel; "
               "each sequence at every state along its path. Exit 0: all limits met; 1: a limit is broken; "
               "2: bad input.")


def add_arguments(p) -> None:
    from steelyard.cli.unit_options import add_unit_options

    p.add_argument("file", help="ledger file (TOML)")
    which = p.add_mutually_exclusive_group()
    which.add_argument("--loadout", metavar="NAME",
                       help="check this loadout only (with its zero-fuel state and the sequences that start from it)")
    which.add_argument("--all", action="store_true", help="check every loadout and sequence (the default)")
    p.add_argument("--json", action="store_true", help="one JSON object on stdout, SI units")
    add_unit_options(p)


def run(args) -> int:
    from steelyard.core.limits.checks import check_ledger
    from steelyard.core.display import DisplayUnits
    from steelyard.cli.loading import prepare
    from steelyard.cli.render.check import check_record, print_check

    loaded, report = prepare(args.file, args.loadout, check_ledger)
    if args.json:
        json.dump(check_record(report, loaded.path), sys.stdout, indent=2, allow_nan=False)
        sys.stdout.write("\n")
    else:
        print_check(report, loaded.path, loaded.ledger, DisplayUnits.choose(loaded.ledger.units, args.units))
    return 0 if report.ok else 1
