"""A plot area in SVG: the affine map from data to pixels, axes with nice ticks, labels, a legend.

Data values map to pixels by x_px = left + (x - x0) / (x1 - x0) * (right - left)
and y_px = bottom - (y - y0) / (y1 - y0) * (bottom - top): larger values to the
right and upwards. The data range is that of everything drawn, widened by
`PAD` of its span on each side so nothing sits on the frame. Ticks fall on
round values, steps of 1, 2 or 5 x 10^n (io.report.chart.ticks), labelled with
just enough decimals for that step.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from steelyard.io.report.chart import ticks
from steelyard.io.report.svg import el, num

#: each side of the data range is widened by this share of its span
PAD = 0.06


def data_range(values: np.ndarray) -> tuple[float, float]:
    """(lo, hi) of the finite `values`, padded by PAD of the span (or by 1 / 5 % around a single value)."""
    v = np.asarray(values, dtype=float).ravel()
    v = v[np.isfinite(v)]
    if len(v) == 0:
        return 0.0, 1.0
    lo, hi = float(v.min()), float(v.max())
    pad = PAD * (hi - lo) if hi > lo else max(abs(hi) * 0.05, 1.0)
    return lo - pad, hi + pad


def tick_text(v: float, decimals: int) -> str:
    s = f"{v:,.{decimals}f}"
    return "0" if s.strip("-0.,") == "" else s


@dataclass(frozen=True)
class Axes:
    """A plot box (pixels) and the data range it shows."""

    left: float
    top: float
    right: float
    bottom: float
    x0: float
    x1: float
    y0: float
    y1: float

    def px(self, x):
        return self.left + (np.asarray(x, dtype=float) - self.x0) / (self.x1 - self.x0) * (self.right - self.left)

    def py(self, y):
        return self.bottom - (np.asarray(y, dtype=float) - self.y0) / (self.y1 - self.y0) * (self.bottom - self.top)

    def xy(self, rows: np.ndarray) -> list[tuple[float, float]]:
        """Pixel pairs of data rows (n, 2)."""
        rows = np.asarray(rows, dtype=float).reshape(-1, 2)
        return list(zip(self.px(rows[:, 0]).tolist(), self.py(rows[:, 1]).tolist()))

    def frame(self) -> list[str]:
        """The plot area: a white box the data are clipped to (clip-path id "plot")."""
        w, h = self.right - self.left, self.bottom - self.top
        return ['<defs><clipPath id="plot">' + el("rect", x=float(self.left), y=float(self.top), width=float(w),
                                                   height=float(h)) + "</clipPath></defs>",
                el("rect", class_="plot-area", x=float(self.left), y=float(self.top), width=float(w),
                   height=float(h), fill="#ffffff", stroke="#999999")]

    def grid(self, x_label: str, y_label: str, count: tuple[int, int] = (6, 6)) -> list[str]:
        """Grid lines, ticks and their values on both axes, and the axis labels (with units)."""
        out = []
        xt, xd = ticks(self.x0, self.x1, count[0])
        for v in xt:
            x = float(self.px(v))
            out.append(el("line", x1=x, y1=float(self.top), x2=x, y2=float(self.bottom), stroke="#e6e6e6"))
            out.append(el("line", class_="tick-x", x1=x, y1=float(self.bottom), x2=x, y2=float(self.bottom + 5),
                          stroke="#555555"))
            out.append(el("text", tick_text(v, xd), class_="tick-x", x=x, y=float(self.bottom + 19),
                          text_anchor="middle"))
        yt, yd = ticks(self.y0, self.y1, count[1])
        for v in yt:
            y = float(self.py(v))
            out.append(el("line", x1=float(self.left), y1=y, x2=float(self.right), y2=y, stroke="#e6e6e6"))
            out.append(el("line", class_="tick-y", x1=float(self.left - 5), y1=y, x2=float(self.left), y2=y,
                          stroke="#555555"))
            out.append(el("text", tick_text(v, yd), class_="tick-y", x=float(self.left - 8), y=y + 4.0,
                          text_anchor="end"))
        out.append(el("text", x_label, class_="axis-label x", x=(self.left + self.right) / 2,
                      y=float(self.bottom + 40), text_anchor="middle"))
        mid = (self.top + self.bottom) / 2
        out.append(el("text", y_label, class_="axis-label y", transform=f"translate(18 {num(mid)}) rotate(-90)",
                      text_anchor="middle"))
        return out


def legend(entries: Sequence[tuple[str, str]], left: float, top: float, row: float = 18.0) -> list[str]:
    """One row per entry: a swatch (SVG markup drawn in a 26 x 12 box at the row's start) and its text."""
    out = []
    for k, (swatch, text) in enumerate(entries):
        y = top + k * row
        out.append(f'<g class="legend-entry" transform="translate({num(left)} {num(y)})">{swatch}'
                   + el("text", text, x=34.0, y=10.0) + "</g>")
    return out
