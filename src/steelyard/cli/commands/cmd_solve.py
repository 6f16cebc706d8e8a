"""`steelyard solve MODE FILE`: the trade's weight-and-balance questions about one loadout.

- ``shift``: how much mass to move from one station to another to bring the
  CG to a target (or onto an envelope's nearer limit);
- ``add``: the new mass and CG after adding (or, negative, removing) a mass;
- ``ballast``: the ballast at a station (or at a ballast item) that puts the
  CG on a limit, or just inside an envelope;
- ``payload``: how much more can go at a station before any envelope or
  mass limit that applies to the loadout (and to its zero-fuel state) breaks.

Formulas: FAA-H-8083-1 (core.solvers). Values are bare numbers in the file's
units, strings with a unit ("150 in"), or for x stations "25 %mac".
"""

from __future__ import annotations

import json
import re
import sys

NAME = "solve"
HELP = "weight shift, weight added, ballast and payload remaining for a loadout"
MODES = ("shift", "add", "ballast", "payload")
#: a value that starts "-" then a digit (or "-."), as in "-1e3", "-3in", "-.5": a negative number, never an
#: option. argparse's own test knows only "-2000" and "-0.5", so "--mass -1e3" failed as a missing argument.
NEGATIVE_NUMBER = re.compile(r"^-\.?[0-9]")


def _negatives_are_values(parser) -> None:
    """Let option values be negative numbers in any spelling (no option of `solve` looks like one)."""
    parser._negative_number_matcher = NEGATIVE_NUMBER  # argparse's hook for this (a parser attribute)


def add_arguments(p) -> None:
    sub = p.add_subparsers(dest="mode", metavar="MODE", required=True)

    def common(q):
        _negatives_are_values(q)
        q.add_argument("file", help="ledger file (TOML)")
        q.add_argument("--loadout", metavar="NAME", help="the loadout (default: variable items empty)")
        q.add_argument("--json", action="store_true", help="one JSON object on stdout, SI units")
        q.add_argument("--axis", choices=("x", "y", "z"), default="x", help="axis of the stations (default x)")

    q = sub.add_parser("shift", help="mass to move between two stations to reach a CG")
    common(q)
    q.add_argument("--from", dest="from_station", metavar="STATION", required=True, help="where the mass is now")
    q.add_argument("--to", dest="to_station", metavar="STATION", required=True, help="where it goes")
    target = q.add_mutually_exclusive_group(required=True)
    target.add_argument("--target-cg", metavar="STATION", help="the CG wanted")
    target.add_argument("--envelope", metavar="NAME", help="bring the CG onto this envelope's nearer limit")

    q = sub.add_parser("add", help="new mass and CG after adding (negative: removing) a mass")
    common(q)
    q.add_argument("--mass", required=True, help="mass added (negative removes)")
    q.add_argument("--station", required=True, help="where it goes")

    q = sub.add_parser("ballast", help="ballast that puts the CG on a limit or inside an envelope")
    common(q)
    where = q.add_mutually_exclusive_group(required=True)
    where.add_argument("--station", help="ballast station")
    where.add_argument("--item", metavar="ID", help="a ballast item: its station, and how much it can take")
    goal = q.add_mutually_exclusive_group()
    goal.add_argument("--limit", metavar="STATION", help="the CG limit to reach")
    goal.add_argument("--envelope", metavar="NAME", help="just inside this envelope (default: every envelope "
                                                         "on the axis that applies to the loadout)")

    q = sub.add_parser("payload", help="mass that can still be added at a station before a limit breaks")
    common(q)
    where = q.add_mutually_exclusive_group(required=True)
    where.add_argument("--station", help="station of the payload (only envelopes on --axis are considered)")
    where.add_argument("--item", metavar="ID", help="a variable item: its position, and its room left")


def run(args) -> int:
    from steelyard.cli.loading import prepare
    from steelyard.cli.commands.solve_modes import solve

    loaded, (record, lines) = prepare(args.file, args.loadout, lambda ledger, _loadout: solve(ledger, args))
    if args.json:
        json.dump(record, sys.stdout, indent=2, allow_nan=False)
        sys.stdout.write("\n")
    else:
        from steelyard.core.caution import CAUTION
        from steelyard.core.display import visible

        print(visible(f"{loaded.path}, loadout {args.loadout or '(none: variable items empty)'}"))
        print("\n".join(visible(line) for line in lines))
        print(CAUTION)
    return 0
