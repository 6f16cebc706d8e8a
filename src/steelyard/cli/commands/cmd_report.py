"""`steelyard report FILE -o report.html|report.md`: the review report."""

from __future__ import annotations

import io
import os
import re
import sys

NAME = "report"
HELP = "write a review report (HTML or Markdown): weight statement, growth, loadouts, envelopes, change log"
DESCRIPTION = (
    "Weight statement by group, basic vs predicted mass, allocations, each loadout against each "
    "envelope (status, margins, Monte Carlo probability when items carry tolerances), a chart of "
    "every envelope with the loadouts on it, sequences, a weighing if the ledger has one, the "
    "items, and the change log (since --since). HTML is one file with the charts inside; Markdown "
    "gets each chart as an SVG file beside it plus a text copy in the page. Loadouts: --loadout "
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


def chart_svg(chart) -> str:
    """A text chart through rich's terminal recorder: SVG without an image library."""
    from rich.console import Console
    from rich.text import Text

    from steelyard.io.report.text import clean

    legend = [f"{m}  {t}" for m, t in chart.legend]
    lines = [*chart.lines, "", *legend]
    console = Console(record=True, file=io.StringIO(), width=max(len(s) for s in lines) + 1,
                      force_terminal=True, color_system="truecolor", highlight=False, markup=False)
    marks = {m for m, _ in chart.legend}
    for n, line in enumerate(lines):
        # marks are styled inside the plot (right of the axis) and as a legend line's first character
        start = next((j + 1 for j, ch in enumerate(line) if ch in "│┤"), len(line)) if n < len(chart.lines) else 1
        text = Text()
        for j, ch in enumerate(line):
            if "\u2800" <= ch <= "\u28ff":
                text.append(ch, style="#4fa3e0")
            elif ch in marks and (j >= start if n < len(chart.lines) else j == 0):
                text.append(ch, style="bold #ffb000")
            elif ch in "│┤└─┬":
                text.append(ch, style="#888888")
            else:
                text.append(ch)
        console.print(text, no_wrap=True, overflow="ignore", crop=False)
    svg = console.export_svg(title=f"envelope {clean(chart.envelope)!r}")
    # rich asks a CDN for its web font; a report must open offline and fetch nothing
    return re.sub(r"@font-face\s*\{[^}]*\}", "", svg)


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
    svgs = {c.envelope: chart_svg(c) for c in report.charts}
    files: list[tuple[str, str]] = []
    if kind == "html":
        from steelyard.io.report.html import render_html

        files.append((args.output, render_html(report, svgs)))
    else:
        from steelyard.io.report.md import render_markdown

        stem = os.path.splitext(os.path.basename(args.output))[0]
        folder = os.path.dirname(args.output)
        images = {c.envelope: f"{stem}-chart-{k + 1}.svg" for k, c in enumerate(report.charts)}
        files += [(os.path.join(folder, images[name]), svg) for name, svg in svgs.items()]
        files.append((args.output, render_markdown(report, images)))
    for path, _ in files:  # every output (charts too) is checked before any is written
        check_output(path, inputs=(loaded.path,))
    for path, text in files:  # all built before any is written
        write_output(path, text.encode("utf-8"), inputs=(loaded.path,))
    print(f"wrote {', '.join(p for p, _ in files)}", file=sys.stderr)
    return 0
