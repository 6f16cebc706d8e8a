"""`steelyard export FILE --csv OUT | --json OUT`: items for spreadsheets, or everything in SI for scripts."""

from __future__ import annotations

import os
import sys

NAME = "export"
HELP = "write the ledger's items as CSV (units in the headers) or as JSON in SI with the roll-ups"
DESCRIPTION = (
    "CSV: one row per item, numbers in the file's units (or --units), header cells such as "
    "'mass [lb]' and 'x [in]', own inertia per unit about the item's CG in body axes with products "
    "as integrals (∫xy dm). `steelyard import` reads it back value for value. JSON: every item in SI "
    "with the roll-up of the vehicle and of each loadout (the rollup --json record) and the growth, "
    "allocation and uncertainty figures. OUT '-' writes to stdout. See docs/exchange.md.")


def add_arguments(p) -> None:
    p.add_argument("file", help="ledger file (TOML)")
    p.add_argument("--csv", metavar="OUT", help="write the items as CSV to OUT ('-': stdout)")
    p.add_argument("--json", metavar="OUT", help="write items and roll-ups as JSON (SI) to OUT ('-': stdout)")
    p.add_argument("--units", choices=("si", "us"), help="CSV units (default: the file's own)")
    p.add_argument("--decimal-comma", action="store_true",
                   help="CSV with decimal commas and ';' between cells (for spreadsheets set up that way)")
    p.add_argument("--samples", type=int, default=20000, help="Monte Carlo samples for the JSON (default 20000)")
    p.add_argument("--seed", type=int, default=0, help="Monte Carlo seed (default 0)")


def _write(out: str, parts: list[str] | list[bytes], source: str) -> None:
    """`parts` as text for stdout ('-'), else encoded (UTF-8) for a file, written atomically in one go."""
    from steelyard.io.durability.atomic import write_output

    if out == "-":
        sys.stdout.write("".join(parts))
        return
    write_output(out, parts, inputs=(source,))


def _encoded(out: str, parts) -> list:
    """A file's pieces encoded one at a time as they come (each piece's text freed before the next is
    made: no copy of a 40 MB text); stdout's kept as text."""
    return list(parts) if out == "-" else [p.encode("utf-8") for p in parts]


def _for_terminal(csv_text: str) -> str:
    """CSV shown on a terminal: each control character in a cell as a visible symbol (␛, ␇, ␍)."""
    from steelyard.core.display import visible

    return "\n".join(visible(line) for line in csv_text.split("\n"))


def run(args) -> int:
    from steelyard.core.errors import SteelyardError
    from steelyard.io.durability.atomic import check_output, same_file
    from steelyard.cli.loading import gc_paused, load_for_cli, located

    if not args.csv and not args.json:
        raise SteelyardError("say what to write: --csv OUT and/or --json OUT", field="--csv")
    if args.csv and args.json and args.csv == args.json:
        raise SteelyardError("--csv and --json need different files", field="--json")
    if args.samples < 0:
        raise SteelyardError("must be >= 0", field="--samples")
    for out in (args.csv, args.json):
        if out and out != "-" and os.path.exists(args.file) and same_file(out, args.file):
            raise SteelyardError("would overwrite the ledger itself", file=out)
        if out and out != "-":
            check_output(out, inputs=(args.file,))  # a symlink, a directory, a read-only file: before the work
    loaded = load_for_cli(args.file)
    with located(loaded), gc_paused():
        outputs = []
        if args.csv:
            from steelyard.io.exchange.csv_write import csv_parts  # not csv_io: the import side is not needed

            parts = csv_parts(loaded.ledger, system=args.units, decimal_comma=args.decimal_comma)
            if args.csv == "-" and sys.stdout.isatty():  # shown, not saved: no ESC, BEL or CR from a name
                parts = [_for_terminal("".join(parts))]  # reaches the terminal
            outputs.append((args.csv, _encoded(args.csv, parts)))
        if args.json:
            from steelyard.io.exchange.json_export import export_json_parts

            outputs.append((args.json, _encoded(args.json, export_json_parts(
                loaded.ledger, source=loaded.path, samples=args.samples, seed=args.seed))))
    for out, parts in outputs:  # everything built before anything is written
        _write(out, parts, loaded.path)
        if out != "-":
            print(f"wrote {out}", file=sys.stderr)
    return 0
