"""`steelyard rollup FILE`: mass, CG, inertia and the weight statement."""

from __future__ import annotations

import json
import sys

NAME = "rollup"
HELP = "total mass, CG, inertia tensor and group weight statement of a ledger"


def add_arguments(p) -> None:
    from steelyard.cli.unit_options import add_unit_options

    p.add_argument("file", help="ledger file (TOML)")
    p.add_argument("--loadout", metavar="NAME", help="apply this loadout (default: variable items empty)")
    p.add_argument("--json", action="store_true", help="one JSON object on stdout, SI units")
    add_unit_options(p)


def run(args) -> int:
    from steelyard.core.loading.loadout import resolve
    from steelyard.core.physics.rollup import rollup_state
    from steelyard.cli.loading import gc_paused, located, prepare

    loaded, state = prepare(args.file, args.loadout, resolve)
    mp = rollup_state(state)
    if args.json:
        from steelyard.io.exchange.rollup_json import record_from

        with located(loaded):  # a roll-up beyond a float names the file and the item
            record = record_from(loaded.ledger, mp, args.loadout, state)
        json.dump(record, sys.stdout, indent=2, allow_nan=False)
        sys.stdout.write("\n")
        return 0
    from steelyard.cli.render.rollup import print_rollup

    with located(loaded), gc_paused():
        print_rollup(loaded, state, mp, args.units)
    return 0
