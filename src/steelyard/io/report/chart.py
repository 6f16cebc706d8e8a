"""A CG envelope chart as lines of text: braille dots for edges, one glyph per loading.

The text copy of each envelope chart a Markdown report shows under its
vector picture (io.report.svg_envelope draws the same figures), readable
in a terminal or a plain-text diff. Each character cell holds 2 x 4
braille dots, so a 64 x 18 cell chart has a 128 x 72 dot raster. `ticks`
(1, 2, 5 x 10^n steps) serves both charts. Pure numpy and str.
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

# braille bit of the dot at (row 0..3, column 0..1) of a cell (Unicode braille patterns)
_BITS = np.array([[0x01, 0x08], [0x02, 0x10], [0x04, 0x20], [0x40, 0x80]], dtype=np.int64)
MARKS = "123456789ABCDEFGHJKLMNPQRSTUVWXYZ"


def ticks(lo: float, hi: float, count: int = 5) -> tuple[list[float], int]:
    """About `count` round values (1, 2 or 5 x 10^k steps) in [lo, hi], and the decimals to show."""
    span = hi - lo
    if not span > 0:
        return [lo], 2
    raw = span / count
    mag = 10.0 ** math.floor(math.log10(raw))
    step = next(m * mag for m in (1, 2, 5, 10) if m * mag >= raw * (1 - 1e-9))
    first = math.ceil(lo / step - 1e-9)
    values = [k * step for k in range(first, math.floor(hi / step + 1e-9) + 1)]
    return values, max(0, -math.floor(math.log10(step) + 1e-9))


def _rows(a) -> np.ndarray:
    a = np.asarray(a, dtype=float).reshape(-1, 2)
    return a[np.isfinite(a).all(axis=1)]


def text_chart(polygon, points: Sequence[tuple[str, float, float]] = (), regions: Sequence = (),
               paths: Sequence = (), *, width: int = 64, height: int = 18, x_label: str = "CG",
               y_label: str = "mass") -> list[str]:
    """Envelope outline (k, 2) [cg, mass], marked points (mark, cg, mass), dotted paths
    (every second dot) and sparser dotted regions (every third). Values in display units;
    mass grows upwards, CG to the right. Marks are drawn last, over lines.
    """
    poly = _rows(polygon)
    pts = [(m, float(c), float(w)) for m, c, w in points if math.isfinite(c) and math.isfinite(w)]
    regs = [_rows(r) for r in regions]
    lines = [_rows(p) for p in paths]
    every = np.concatenate([poly, np.array([[c, w] for _, c, w in pts]).reshape(-1, 2), *regs, *lines])
    if len(every) == 0:
        return ["(nothing to chart)"]
    lo, hi = every.min(axis=0), every.max(axis=0)
    span = np.where(hi > lo, hi - lo, np.maximum(np.abs(hi), 1.0))
    lo, hi = lo - 0.06 * span, hi + 0.06 * span
    dots = np.zeros((4 * height, 2 * width), dtype=bool)
    sx, sy = (2 * width - 1) / (hi[0] - lo[0]), (4 * height - 1) / (hi[1] - lo[1])

    def place(xy: np.ndarray, stride: int = 1) -> None:
        """Dots along a polyline; `stride` > 1 keeps every stride-th dot of the whole line (dotted)."""
        if len(xy) < 2:
            return
        col, row = (xy[:, 0] - lo[0]) * sx, (hi[1] - xy[:, 1]) * sy
        n = (2 * np.maximum(np.abs(np.diff(col)), np.abs(np.diff(row)))).astype(int) + 2
        t = np.concatenate([np.linspace(0.0, 1.0, k) for k in n])
        seg = np.repeat(np.arange(len(n)), n)
        c = np.rint(col[seg] + t * (col[seg + 1] - col[seg])).astype(int)
        r = np.rint(row[seg] + t * (row[seg + 1] - row[seg])).astype(int)
        keep = np.ones(len(c), bool)
        keep[1:] = (c[1:] != c[:-1]) | (r[1:] != r[:-1])  # one dot per raster step, then thin
        c, r = c[keep][::stride], r[keep][::stride]
        dots[np.clip(r, 0, 4 * height - 1), np.clip(c, 0, 2 * width - 1)] = True

    if len(poly):
        place(np.vstack([poly, poly[:1]]))
    for line in lines:
        place(line, stride=2)
    for reg in regs:
        place(reg, stride=3)
    cells = (dots.reshape(height, 4, width, 2) * _BITS[None, :, None, :]).sum(axis=(1, 3))
    grid = [[chr(0x2800 + int(v)) if v else " " for v in row] for row in cells]
    for mark, c, w in pts:
        col = min(max(int(np.rint((c - lo[0]) * sx)) // 2, 0), width - 1)
        row = min(max(int(np.rint((hi[1] - w) * sy)) // 4, 0), height - 1)
        grid[row][col] = mark[:1]

    yt, yd = ticks(lo[1], hi[1], max(3, height // 4))
    labels = {min(max(int(np.rint((hi[1] - t) * sy)) // 4, 0), height - 1): f"{t:,.{yd}f}" for t in yt}
    gutter = max([len(s) for s in labels.values()] + [len(y_label)])
    out = [f"{y_label:>{gutter}}"]
    for r, row in enumerate(grid):
        tick = r in labels
        out.append(f"{labels.get(r, ''):>{gutter}} {'┤' if tick else '│'}" + "".join(row))
    axis = ["─"] * width
    under = [" "] * (width + 12)
    xt, xd = ticks(lo[0], hi[0], max(2, width // 12))
    free = 0
    for t in xt:
        col = int(np.rint((t - lo[0]) * sx)) // 2
        if not 0 <= col < width:
            continue
        axis[col] = "┬"
        text = f"{t:,.{xd}f}"
        start = max(col - len(text) // 2, free)
        if start + len(text) <= len(under):
            under[start:start + len(text)] = text
            free = start + len(text) + 1
    out.append(" " * gutter + " └" + "".join(axis))
    out.append(" " * (gutter + 2) + "".join(under).rstrip())
    out.append(" " * (gutter + 2) + f"{x_label:^{width}}".rstrip())
    return out
