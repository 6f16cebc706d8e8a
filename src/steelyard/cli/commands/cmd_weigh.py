"""`steelyard weigh FILE`: reduce the ledger's [weighing] table to basic empty mass and CG."""

from __future__ import annotations

import json
import os
import sys

NAME = "weigh"
HELP = "reduce scale readings and tares ([weighing]) to basic empty mass and CG; --apply writes it"
DESCRIPTION = (
    "Reduce the ledger's [weighing] table: net = reading - tare at each support point, weighed mass "
    "and CG, minus what was on board, plus what was missing, gives the basic empty mass and CG "
    "(FAA-H-8083-1). Compares it with the item named by 'replaces'; --apply writes the ledger with "
    "that item replaced (maturity 'measured'). A level weighing does not find the vertical CG: it "
    "comes from vertical_cg or keeps the item's old value. See docs/control.md.")


def add_arguments(p) -> None:
    from steelyard.cli.unit_options import add_unit_options

    p.add_argument("file", help="ledger file (TOML) with a [weighing] table")
    p.add_argument("--json", action="store_true", help="one JSON object on stdout, SI units")
    p.add_argument("--apply", action="store_true", help="write the ledger with the weighed empty item")
    p.add_argument("-o", "--output", metavar="OUT", help="with --apply: write to OUT instead of FILE")
    p.add_argument("--force", action="store_true",
                   help="with --apply: rewrite FILE although it has no write permission, or replace an "
                        "existing OUT")
    p.add_argument("--author", help="name for the change log (default: $STEELYARD_AUTHOR or the login name)")
    add_unit_options(p)


def _author(args) -> str:
    if args.author:
        return args.author
    env = os.environ.get("STEELYARD_AUTHOR")
    if env:
        return env
    try:
        import getpass

        return getpass.getuser()
    except Exception:  # no login name in some containers
        return "unknown"


def _with_log(ledger, new, item_id: str, summary: str, author: str):
    """Record the change if the change-log module is present; (ledger, recorded?)."""
    from steelyard.core.history import changes

    # the file's own log goes in first, or rewriting the file would lose it
    history = changes.History(ledger, changes.log_from_ledger(ledger))
    history.apply(new, action="weighing", item=item_id, summary=summary, loadout=None, author=author)
    return changes.ledger_with_log(history.ledger, history.log), True


def _apply(args, loaded, w, out) -> dict:
    """Write the ledger with the weighed item through `out` (a LedgerRewrite, its lock held)."""
    from steelyard.cli.loading import located
    from steelyard.io.report.weighing import weighed_ledger, weighing_summary

    ledger = loaded.ledger
    with located(loaded):
        new = weighed_ledger(ledger, w)
        new, logged = _with_log(ledger, new, w.replaces, weighing_summary(ledger, w), _author(args))
    out.write(out.text_for(new))  # in place: the file's comments and layout kept
    if out.not_kept:
        print(f"steelyard: note: {out.target}: written in canonical form; its own layout could not be kept "
              f"({out.not_kept})", file=sys.stderr)
    return {"file": out.target, "item": w.replaces, "change_logged": logged}


def _load(args, out):
    """Load FILE and reduce its weighing; with `out`, FILE is what the write replaces."""
    from steelyard.io.report.weighing import weigh_ledger
    from steelyard.cli.loading import load_for_cli

    loaded = load_for_cli(args.file, cache=out is None)  # --apply writes the ledger: read afresh
    w = weigh_ledger(loaded.ledger, source=loaded.path)
    if out is not None:
        out.replaces(loaded)
    return loaded, w


def run(args) -> int:
    from steelyard.core.errors import SteelyardError
    from steelyard.io.durability.atomic import same_file
    from steelyard.io.ledger.file import rewriting
    from steelyard.io.report.weighing import weighing_record

    if args.output and not args.apply:
        raise SteelyardError("-o/--output only goes with --apply", field="--output")
    if not args.apply:
        loaded, w = _load(args, None)
        record, applied = weighing_record(w), None
    else:
        target = args.output or args.file
        in_place = os.path.exists(args.file) and same_file(target, args.file)
        if not in_place and os.path.lexists(target) and not args.force:
            raise SteelyardError("already exists; pass --force to replace it", file=target, field="--output")
        with rewriting(target, source=args.file, force=args.force) as out:  # the editor's lock, held to the end
            loaded, w = _load(args, out)
            record = weighing_record(w)
            applied = _apply(args, loaded, w, out)
    if args.json:
        record = {**record, "applied": applied}
        json.dump(record, sys.stdout, indent=2, allow_nan=False)
        sys.stdout.write("\n")
    else:
        from rich.console import Console

        console = Console(highlight=False, markup=False)
        print_weighing(console, loaded, record, args.units)
        if applied:
            console.print(_applied_text(applied))
    if applied and not applied["change_logged"]:
        print("steelyard: note: change log not recorded (this version has no change-log module)",
              file=sys.stderr)
    return 0


def _applied_text(applied: dict) -> str:
    text = f"Wrote {applied['file']}: item {applied['item']!r} replaced by the weighed empty vehicle"
    if applied["change_logged"]:
        text += "; change log updated"
    return text + "."


def print_weighing(console, loaded, record: dict, system: str | None) -> None:
    """The reduction as rich tables, in the file's units (or `system`)."""
    from rich.table import Table
    from rich.text import Text

    from steelyard.core.display import AXIS_NAMES, DisplayUnits, pretty_unit
    from steelyard.core.numbers import cell
    from steelyard.io.report.text import clean

    du = DisplayUnits.choose(loaded.ledger.units, system)
    mu, lu = pretty_unit(du.mass), pretty_unit(du.length)
    # one count of decimals per dimension (docs/numbers.md): 5 significant figures at the
    # weighed mass and the farthest support point or CG
    dm = du.column_decimals([record["weighed_mass_kg"], *(p["reading_kg"] for p in record["points"])], "mass")
    dl = du.column_decimals([c for p in record["points"] for c in p["at_m"] if c is not None]
                            + [c for c in record["weighed_cg_m"] if c is not None], "length")

    def m(x):
        return cell(None if x is None else du.m(x), dm)

    def xyz(v):
        return [cell(None if c is None else du.l(c), dl) for c in v]

    console.print(Text(f"Weighing of {clean(loaded.path)}", style="bold"))
    t = Table(title="Support points (net = reading - tare)", title_justify="left")
    t.add_column("point")
    for col in (*(f"{a} [{lu}]" for a in AXIS_NAMES), f"reading [{mu}]", f"tare [{mu}]", f"net [{mu}]"):
        t.add_column(col, justify="right")
    for p in record["points"]:
        t.add_row(Text(clean(p["name"])), *xyz(p["at_m"]), m(p["reading_kg"]), m(p["tare_kg"]), m(p["net_kg"]))
    console.print(t)
    r = Table(title="Reduction: weighed - on board + missing = basic empty", title_justify="left")
    r.add_column("")
    for col in (f"mass [{mu}]", *(f"CG {a} [{lu}]" for a in AXIS_NAMES)):
        r.add_column(col, justify="right")
    r.add_row("weighed", m(record["weighed_mass_kg"]), *xyz(record["weighed_cg_m"]))
    for a in record["on_board"]:
        r.add_row(Text(f"- {clean(a['name'])} (on board)"), m(-a["mass_kg"]), *xyz(a["at_m"]))
    for a in record["missing"]:
        r.add_row(Text(f"+ {clean(a['name'])} (missing)"), m(a["mass_kg"]), *xyz(a["at_m"]))
    r.add_row(Text("= basic empty", style="bold"), m(record["empty_mass_kg"]), *xyz(record["empty_cg_m"]))
    console.print(r)
    if any(c is None for c in record["empty_cg_m"]):
        console.print(Text(f"The {record['vertical_axis']} CG is not found by a level weighing: give "
                           "vertical_cg, or the replaced item keeps its old value."))
    c = record["comparison"]
    if c:
        k = Table(title=Text(f"Compared with item {clean(c['item'])!r}"), title_justify="left")
        for col in ("", "ledger (old)", "weighed (new)", "change"):
            k.add_column(col, justify="left" if not col else "right")
        k.add_row(f"mass [{mu}]", m(c["old_mass_kg"]), m(c["new_mass_kg"]), m(c["delta_mass_kg"]))
        for j, a in enumerate(AXIS_NAMES):
            k.add_row(f"CG {a} [{lu}]", *xyz([v[j] for v in (c["old_cg_m"], c["new_cg_m"], c["delta_cg_m"])]))
        console.print(k)
