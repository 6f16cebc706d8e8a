"""`steelyard trend` on a terminal: the history table, a braille chart, and the --json record.

The chart reuses the editor's raster arithmetic (`io.report.raster`:
pure numpy, no Textual) for dots along lines and braille cells. Basic mass
is a solid line, predicted mass a dashed one, the allocation a step line
(a budget holds until a commit changes it); where lines share a cell, the
basic mass's colour wins.
"""

from __future__ import annotations

import numpy as np
from rich import box
from rich.console import Console
from rich.table import Table
from rich.text import Text

from steelyard.core.display import DisplayUnits, pretty_unit, visible
from steelyard.core.history.trend import Trend
from steelyard.io.report.trend import COLOURS, date_ticks, mass_range, series, trend_table, what_of
from steelyard.io.report.raster import braille, fmt_tick, line_dots, nice_ticks


def trend_record(trend: Trend) -> dict:
    """The --json record: readable points, and the revisions that were not read with why."""
    points = []
    for p in trend.read:
        f = p.figures
        points.append({"rev": p.rev, "date": p.date, "subject": p.subject, "mass_kg": f.mass_kg,
                       "cg_m": None if f.cg_m is None else list(f.cg_m), "predicted_kg": f.predicted_kg,
                       "allocation_kg": f.allocation_kg, "margin_kg": f.margin_kg})
    return {"points": points, "skipped": [{"rev": p.rev, "reason": p.reason} for p in trend.skipped]}


#: drawn in this order, so the later (more important) line's colour wins a shared cell
_LINES = (("allocation", "allocation (not-to-exceed), a step line"), ("predicted", "predicted mass (with growth)"),
          ("mass", "basic mass"))


def chart_lines(trend: Trend, du: DisplayUnits, width: int = 64, height: int = 12) -> list[Text]:
    """The chart as rich Text lines (y labels, plot, date axis, legend); [] with nothing to draw."""
    s = series(trend, du)
    if len(s) == 0:
        return []
    lo, hi = mass_range(s)
    t0, t1 = float(s.t.min()), float(s.t.max())
    if not t1 > t0:
        t0, t1 = t0 - 86400.0, t1 + 86400.0
    cols, rows = 2 * width - 1, 4 * height - 1

    def dots(t, v):
        return np.column_stack([(t - t0) / (t1 - t0) * cols, (hi - v) / (hi - lo) * rows])

    cells = np.zeros((height, width), dtype=np.uint32)
    owner = np.full((height, width), "", dtype=object)
    drawn = []
    for key, label in _LINES:
        ys = {"mass": s.mass, "predicted": s.predicted, "allocation": s.allocation}[key]
        ok = np.isfinite(ys)
        if not ok.any():
            continue
        t, v = s.t[ok], ys[ok]
        if key == "allocation":
            t, v = np.repeat(t, 2)[1:], np.repeat(v, 2)[:-1]
        pts = dots(t, v)
        d = line_dots(pts, False, key == "predicted") if len(pts) > 1 else np.rint(pts).astype(int)
        bits = braille(d, height, width)
        cells |= bits.astype(np.uint32)
        owner[bits > 0] = key
        drawn.append((key, label))
    ticks, decimals = nice_ticks(lo, hi, max(2, height // 3))
    labels = {min(max(int(round((hi - v) / (hi - lo) * rows)) // 4, 0), height - 1): fmt_tick(v, decimals)
              for v in ticks}  # the cell row that holds the tick's dot row
    y_title = f"mass [{pretty_unit(du.mass)}]"
    gutter = max([len(x) for x in labels.values()] + [len(y_title)])
    out = [Text(f"{y_title:>{gutter}}")]
    for r in range(height):
        line = Text(f"{labels.get(r, ''):>{gutter}} {'┤' if r in labels else '│'}", style="#888888")
        for c in range(width):
            v = int(cells[r, c])
            line.append(chr(0x2800 + v) if v else " ", style=COLOURS.get(owner[r, c]) if v else None)
        out.append(line)
    axis, under = ["─"] * width, [" "] * (width + 12)
    free = 0
    for t, label in date_ticks(t0, t1, max(2, width // 16)):
        c = int(round((t - t0) / (t1 - t0) * cols)) // 2
        if not 0 <= c < width:
            continue
        axis[c] = "┬"
        start = max(c - len(label) // 2, free)
        if start + len(label) <= len(under):
            under[start:start + len(label)] = label
            free = start + len(label) + 2
    out.append(Text(" " * gutter + " └" + "".join(axis), style="#888888"))
    out.append(Text(" " * (gutter + 2) + "".join(under).rstrip()))
    out.append(Text(" " * (gutter + 2) + f"{'commit date (UTC)':^{width}}".rstrip()))
    for key, label in reversed(drawn):
        out.append(Text(" " * (gutter + 2)).append("── " if key != "predicted" else "┄┄ ", style=COLOURS[key])
                   .append(label))
    return out


def trend_renderables(trend: Trend, label: str, du: DisplayUnits, width: int = 80) -> list:
    """What `steelyard trend` prints (and the editor's history screen shows): title, table, chart."""
    n = len(trend.points)
    out: list = [Text(visible(f"Mass history of {label}: {what_of(trend)}"), style="bold")]
    if not n:
        return out + [Text("No commit changes this file (is it committed?).")]
    out.append(Text(f"{n} commit{'s' if n != 1 else ''} changed it, oldest first"
                    + (f"; {len(trend.skipped)} could not be read" if trend.skipped else "")
                    + f". Mass in {pretty_unit(du.mass)}, CG in {pretty_unit(du.length)}."))
    headers, rows, right = trend_table(trend, du)
    names = [h.split(" [")[0] for h in headers]  # units are said once above
    numbers = len(headers) - 3
    if width >= 60 + 11 * numbers:  # everything on one row
        out.append(_table(names, rows, right, trend, range(len(headers))))
    else:  # narrow: the commits, then their figures by commit hash
        out.append(_table(names, rows, right, trend, (0, 1, 2)))
        out.append(_table(names, rows, right, trend, (1, *range(3, len(headers))), skip_unread=True, tight=True))
    return out + chart_lines(trend, du, width=max(24, min(72, width - 14)))


def _table(names, rows, right, trend: Trend, columns, *, skip_unread: bool = False, tight: bool = False) -> Table:
    """The columns `columns` of the history table; `tight`: one space between columns."""
    table = Table(show_header=True, box=box.SIMPLE_HEAD, pad_edge=False, show_edge=not tight,
                  padding=(0, 0) if tight else (0, 1))
    for j in columns:
        table.add_column(names[j], justify="right" if j in right else "left", overflow="fold", no_wrap=j != 2,
                         min_width=12 if j == 2 else None, max_width=48 if j == 2 else None)
    for row, p in zip(rows, trend.points):
        if skip_unread and p.figures is None:
            continue
        cells = [Text(visible(row[j])) for j in columns]
        if p.figures is None and 2 in columns:
            cells[list(columns).index(2)].stylize("italic #c0392b")
        table.add_row(*cells)
    return table


def print_trend(trend: Trend, label: str, du: DisplayUnits, console: Console | None = None) -> None:
    console = console or Console(highlight=False, markup=False)
    for part in trend_renderables(trend, label, du, console.width):
        if isinstance(part, Text):
            console.print(part, no_wrap=True, overflow="ignore", crop=False)
        else:
            console.print(part)
