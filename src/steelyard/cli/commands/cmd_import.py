"""`steelyard import CSV -o LEDGER [--into EXISTING]`: items from a spreadsheet, all or nothing."""

from __future__ import annotations

import os
import sys

NAME = "import"
HELP = "read items from CSV (units in the headers) into a new ledger or merged into an existing one"
DESCRIPTION = (
    "Reads the CSV `steelyard export --csv` writes (or one made to match: header cells like "
    "'mass [lb]', 'x [in]'). Separators ',', ';' or tab are recognised; --decimal-comma reads '1,5' "
    "as 1.5. Any bad cell stops the import with its line number and column, and nothing is written. "
    "--into merges: rows replace the items with the same id, new ids are appended, and columns the "
    "CSV lacks leave those fields alone. See docs/exchange.md.")


def add_arguments(p) -> None:
    p.add_argument("csv", help="CSV file")
    p.add_argument("-o", "--output", metavar="LEDGER", required=True, help="ledger file to write")
    p.add_argument("--into", metavar="EXISTING", help="merge into this ledger (loadouts, envelopes, units kept)")
    p.add_argument("--decimal-comma", action="store_true", help="cells use a decimal comma ('1,5')")
    p.add_argument("--force", action="store_true",
                   help="replace an existing LEDGER; also rewrites a ledger that has no write permission")
    p.add_argument("--author", help="name for the change log when merging (default: $STEELYARD_AUTHOR or login)")


def _log(ledger, new, imp, source: str, author: str):
    from steelyard.core.history import changes

    history = changes.History(ledger, changes.log_from_ledger(ledger))
    summary = f"imported {os.path.basename(source)}: {len(imp.replaced)} changed, {len(imp.added)} added"
    history.apply(new, action="import", item=None, summary=summary, loadout=None, author=author,
                  before=None, after=None)
    return changes.ledger_with_log(history.ledger, history.log), True


def run(args) -> int:
    from steelyard.core.errors import SteelyardError
    from steelyard.io.durability.atomic import same_file
    from steelyard.io.exchange.csv_io import check_ledger, read_csv_file
    from steelyard.io.ledger.file import rewriting
    from steelyard.cli.commands.cmd_weigh import _author
    from steelyard.cli.loading import load_for_cli

    target = args.output
    in_place = args.into is not None and os.path.exists(args.into) and same_file(target, args.into)
    if not in_place and os.path.lexists(target) and not args.force:
        raise SteelyardError("already exists; pass --force to replace it (or --into it to merge)", file=target,
                             field="--output")
    with rewriting(target, source=args.into, force=args.force) as out:  # the editor's lock, held to the end
        loaded = load_for_cli(args.into, cache=False) if args.into else None
        if loaded is not None:
            out.replaces(loaded)
        imp = read_csv_file(args.csv, decimal_comma=args.decimal_comma, into=loaded.ledger if loaded else None,
                            check=False, at=target)
        ledger = imp.ledger
        logged = False
        if loaded is not None and (imp.added or imp.replaced):
            try:
                ledger, logged = _log(loaded.ledger, ledger, imp, args.csv, _author(args))
            except SteelyardError as exc:
                raise exc.located(file=args.csv)
        text = check_ledger(ledger, args.csv, at=target)  # everything read back before anything is written
        out.write(out.text_for(ledger, canonical=text))  # in place: the file's comments and layout kept
    if out.not_kept:
        print(f"steelyard: note: {target}: written in canonical form; its own layout could not be kept "
              f"({out.not_kept})", file=sys.stderr)
    done = f"imported {len(imp.added) + len(imp.replaced) + len(imp.unchanged)} items from {args.csv} into {target}"
    if loaded is not None:
        done += (f" ({len(imp.replaced)} changed, {len(imp.added)} added, {len(imp.unchanged)} unchanged"
                 + ("; change log updated)" if logged else ")"))
    print(done)
    return 0
