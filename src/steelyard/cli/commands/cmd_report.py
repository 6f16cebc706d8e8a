"""`steelyard report FILE -o report.html|report.md`: the review report."""

from __future__ import annotations

import os
import sys

NAME = "report"
HELP = "write a review report (HTML or Markdown): weight statement, growth, loadouts, envelopes, change log"
DESCRIPTION = (
    "Weight statement by group, basic vs predicted mass, allocations, each loadout against each "
    "envelope (status, margins, Monte Carlo probability when items carry tolerances), a chart of "
    "every envelope with the loadouts on it, sequences, a weighing if the ledger has one, the "
    "items, and the change log (since --since). HTML is one file with the charts inside; Markdown "
    "gets each chart as an SVG file beside it, named after the report (REPORT-envelope-NAME.svg), "
    "plus a text copy in the page. Loadouts: --loadout "
    "NAME (repeatable); --all for every loadout and the vehicle with variable items empty; by "
    "default every loadout. See docs/report.md.")


def add_arguments(p) -> None:
    from steelyard.cli.unit_options import add_unit_options

    p.add_argument("file", help="ledger file (TOML)")
    p.add_argument("-o", "--output", metavar="OUT", required=True, help="report.html or report.md")
    p.add_argument("--loadout", metavar="NAME", action="append", help="a loadout to show (repeatable)")
    p.add_argument("--all", action="store_true", help="every loadout, and the vehicle with variable items empty")
    p.add_argument("--since", metavar="TIME", help="change log from this date/time on (ISO 8601, UTC if no zone)")
    add_unit_options(p)
    p.add_argument("--samples", type=int, default=20000, help="Monte Carlo samples per loadout (default 20000)")
    p.add_argument("--seed", type=int, default=0, help="Monte Carlo seed (default 0)")


def _format(path: str) -> str:
    from steelyard.core.errors import SteelyardError

    ext = os.path.splitext(path)[1].lower()
    if ext in (".html", ".htm"):
        return "html"
    if ext in (".md", ".markdown"):
        return "md"
    raise SteelyardError("must end in .html or .md (the format follows the name)", file=path, field="--output")


def _loadouts(args, loaded) -> list:
    from steelyard.core.errors import SteelyardError
    from steelyard.cli.loading import check_loadout

    if args.all and args.loadout:
        raise SteelyardError("give --loadout NAME or --all, not both", field="--all")
    names = [lo.name for lo in loaded.ledger.loadouts]
    if args.loadout:
        for n in args.loadout:
            check_loadout(loaded, n)
        return list(dict.fromkeys(args.loadout))
    if args.all:
        return [None, *names]
    return names or [None]


def run(args) -> int:
    from steelyard.core.errors import SteelyardError
    from steelyard.io.durability.atomic import check_output, write_output
    from steelyard.io.report.build import build_report, parse_time
    from steelyard.cli.loading import load_for_cli

    kind = _format(args.output)
    if args.samples < 0:
        raise SteelyardError("must be >= 0", field="--samples")
    since = parse_time(args.since) if args.since else None
    check_output(args.output, inputs=(args.file,))  # before the slow part; again below with the chart files
    loaded = load_for_cli(args.file)
    report = build_report(loaded.ledger, source=loaded.path, loadouts=_loadouts(args, loaded),
                          system=args.units, since=since, samples=args.samples, seed=args.seed)
    from steelyard.io.report.svg_envelope import envelope_svg

    svgs = {c.envelope: envelope_svg(c) for c in report.charts}
    files: list[tuple[str, str]] = []
    if kind == "html":
        from steelyard.io.report.html import render_html

        files.append((args.output, render_html(report, svgs)))  # the charts inline
    else:
        from steelyard.io.report.chart_files import envelope_files, trend_file
        from steelyard.io.report.md import render_markdown
        from steelyard.io.report.svg import standalone
        from steelyard.io.report.trend import trend_svg

        stem = os.path.splitext(os.path.basename(args.output))[0]
        folder = os.path.dirname(args.output)
        images = envelope_files(stem, [c.envelope for c in report.charts])
        files += [(os.path.join(folder, images[name]), standalone(svg)) for name, svg in svgs.items()]
        trend = trend_svg(report.trend, report.units) if report.trend is not None else ""
        if trend:
            files.append((os.path.join(folder, trend_file(stem)), standalone(trend)))
        files.append((args.output, render_markdown(report, images, trend_file(stem) if trend else None)))
    for path, _ in files:  # every output (charts too) is checked before any is written
        check_output(path, inputs=(loaded.path,))
    for path, text in files:  # all built before any is written
        write_output(path, text.encode("utf-8"), inputs=(loaded.path,))
    print(f"wrote {', '.join(p for p, _ in files)}", file=sys.stderr)
    return 0
