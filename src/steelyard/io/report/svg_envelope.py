"""An envelope chart as vector graphics: the envelope, the loadings on it and the sequence paths.

CG along the envelope's axis to the right, mass upwards, both in the
report's display units with their units on the axis labels. The envelope is
a filled polygon; each loading a dot with its mark (a square, and the word
OUTSIDE in the legend, when outside: status is never left to a colour);
uncertainty regions dashed outlines; each burn or drop sequence a dashed
polyline from its loadout to a ringed end point. Drawn from `Chart`'s
numbers (io.report.build), which are those the text chart plots.
"""

from __future__ import annotations

import numpy as np

from steelyard.io.report.build import Chart
from steelyard.io.report.svg import document, el, points
from steelyard.io.report.svg_axes import Axes, data_range, legend

WIDTH = 760
LEFT, TOP, RIGHT, PLOT_HEIGHT = 84, 40, 740, 320
ROW = 18
ENVELOPE = "#1f77b4"
INSIDE, OUTSIDE = "#1d1d1d", "#c0392b"
PATHS = ("#d98200", "#2a9d8f", "#8e44ad", "#6d4c41", "#e91e63")


def _rows(a) -> np.ndarray:
    a = np.asarray(a, dtype=float).reshape(-1, 2)
    return a[np.isfinite(a).all(axis=1)]


def chart_axes(chart: Chart) -> Axes:
    """The plot box and the data range of everything the chart draws (svg_axes.data_range on each axis)."""
    parts = [_rows(chart.polygon), _rows([(x, w) for _m, _l, x, w, _i in chart.points]),
             *(_rows(r) for r in chart.regions), *(_rows(rows) for *_x, rows in chart.paths)]
    every = np.concatenate(parts) if parts else np.zeros((0, 2))
    x0, x1 = data_range(every[:, 0])
    y0, y1 = data_range(every[:, 1])
    return Axes(LEFT, TOP, RIGHT, TOP + PLOT_HEIGHT, x0, x1, y0, y1)


def _q(name: object) -> str:
    """A name in quotes as typed (esc() makes it safe later; repr would show escapes as code)."""
    return f"'{name}'"


def _dot(x: float, y: float, inside: bool) -> str:
    if inside:
        return el("circle", cx=x, cy=y, r=4.5, fill=INSIDE)
    return el("rect", x=x - 4.5, y=y - 4.5, width=9.0, height=9.0, fill=OUTSIDE)


def envelope_svg(chart: Chart) -> str:
    """The chart as one `<svg>` element."""
    ax = chart_axes(chart)
    body = [el("text", f"Envelope {_q(chart.envelope)}: CG {chart.axis} against mass", class_="title",
               x=float(LEFT), y=24.0, font_weight="bold", font_size="14"), *ax.frame(),
            *ax.grid(chart.x_label, chart.y_label)]
    data = []
    keys: list[tuple[str, str]] = []
    poly = _rows(chart.polygon)
    if len(poly):
        data.append(el("polygon", class_="envelope", points=points(ax.xy(poly)), fill=ENVELOPE,
                       fill_opacity="0.12", stroke=ENVELOPE, stroke_width="2"))
        keys.append((el("rect", x=1.0, y=1.0, width=24.0, height=10.0, fill=ENVELOPE, fill_opacity="0.12",
                        stroke=ENVELOPE, stroke_width="2"), f"envelope {_q(chart.envelope)}"))
    for reg in chart.regions:
        reg = _rows(reg)
        if len(reg):
            data.append(el("polygon", class_="region", points=points(ax.xy(reg)), fill="none", stroke="#777777",
                           stroke_dasharray="3 3"))
    if any(len(_rows(r)) for r in chart.regions):
        keys.append((el("rect", x=1.0, y=1.0, width=24.0, height=10.0, fill="none", stroke="#777777",
                        stroke_dasharray="3 3"), "uncertainty region of each loading (2 sigma, normal approximation)"))
    for k, (mark, name, loadout, rows) in enumerate(chart.paths):
        rows = _rows(rows)
        if not len(rows):
            continue
        colour = PATHS[k % len(PATHS)]
        data.append(el("polyline", class_="sequence", points=points(ax.xy(rows)), fill="none", stroke=colour,
                       stroke_width="2", stroke_dasharray="6 4"))
        ex, ey = ax.xy(rows[-1:])[0]
        data.append(el("circle", class_="sequence-end", cx=ex, cy=ey, r=6.0, fill="none", stroke=colour,
                       stroke_width="2"))
        data.append(el("text", mark, x=ex + 8.0, y=ey + 14.0, fill=colour, font_weight="bold"))
        keys.append((el("line", x1=1.0, y1=6.0, x2=25.0, y2=6.0, stroke=colour, stroke_width="2",
                        stroke_dasharray="6 4"),
                     f"{mark}: sequence {_q(name)} from loadout {_q(loadout)} (ring: its end)"))
    for mark, label, x, w, inside in chart.points:
        if not (np.isfinite(x) and np.isfinite(w)):
            continue
        (px, py), = ax.xy(np.array([[x, w]]))
        data.append('<g class="loading">' + _dot(px, py, inside)
                    + el("text", mark, x=px + 7.0, y=py - 6.0, font_weight="bold") + "</g>")
        keys.append((_dot(13.0, 6.0, inside), f"{mark}: {label}: {'inside' if inside else 'OUTSIDE'}"))
    body.append('<g clip-path="url(#plot)">' + "\n".join(data) + "</g>")
    top = ax.bottom + 58
    body += legend(keys, LEFT, top, ROW)
    height = int(top + ROW * len(keys) + 8)
    return document(WIDTH, height, body, label=f"envelope {_q(chart.envelope)}: CG {chart.axis} against mass, "
                                                  f"with loadings and sequences")


