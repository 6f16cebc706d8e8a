"""Braille chart raster arithmetic: ticks, dots along lines, braille cells, shaded regions.

Pure numpy on numbers already in display units and dot coordinates (2 x 4
dots per terminal cell). Shared by the editor's envelope chart
(tui.widgets.chart turns the result into Strips) and the terminal trend chart
(io.report.trend_text), so it lives below both.
"""

from __future__ import annotations

import math

import numpy as np

from steelyard.io.report.chart import ticks

# braille bit of the dot at (row 0..3, column 0..1) of a cell
_BITS = np.array([[0x01, 0x08], [0x02, 0x10], [0x04, 0x20], [0x40, 0x80]], dtype=np.uint32)
_MAX_SAMPLES = 400_000  # cap on rasterised dots per line set, whatever the path length


def clean_label(text: str) -> str:
    """Caller text shown literally: control characters (escapes) become '?'."""
    return "".join(ch if ch.isprintable() else "?" for ch in str(text))


def finite_rows(a: np.ndarray | None) -> np.ndarray:
    if a is None:
        return np.zeros((0, 2))
    try:
        a = np.asarray(a, dtype=float).reshape(-1, 2)
    except (TypeError, ValueError):
        return np.zeros((0, 2))
    ok = np.isfinite(a[:, 0]) & np.isfinite(a[:, 1])  # faster than .all(axis=1) on (n, 2)
    return a if ok.all() else a[ok]


def finite_point(p) -> tuple[float, float] | None:
    if p is None:
        return None
    try:
        x, y = float(p[0]), float(p[1])
    except (TypeError, ValueError, IndexError):
        return None
    return (x, y) if math.isfinite(x) and math.isfinite(y) else None


def nice_ticks(lo: float, hi: float, count: int) -> tuple[list[float], int]:
    """About `count` round tick values (steps of 1, 2 or 5 × 10^k) in [lo, hi], and decimals;
    none on an empty range (the report's `ticks` shows `lo` there instead)."""
    if not (hi - lo > 0) or count < 1:
        return [], 0
    return ticks(lo, hi, count)


def fmt_tick(v: float, decimals: int) -> str:
    s = f"{v:.{decimals}f}"
    return "0" if s.strip("-0.") == "" else s


def moved(p: np.ndarray) -> np.ndarray:
    """Mask of rows that differ from the row before (the first always counts)."""
    keep = np.empty(len(p), dtype=bool)
    keep[0] = True
    keep[1:] = (p[1:, 0] != p[:-1, 0]) | (p[1:, 1] != p[:-1, 1])
    return keep


def line_dots(pts: np.ndarray, closed: bool, dashed: bool) -> np.ndarray:
    """Integer dot positions (n, 2) [col, row] along the polyline through pts (dot units).

    Vertices are snapped to dots and repeats dropped first, so a 100,000-state
    path that crosses only a few hundred dots costs a few hundred segments.
    """
    if len(pts) == 0:
        return np.zeros((0, 2), dtype=int)
    pts = np.rint(pts)
    if len(pts) > 1:
        pts = pts[moved(pts)]
    if closed and len(pts) > 1:
        pts = np.vstack([pts, pts[:1]])
    a, b = pts[:-1], pts[1:]
    if len(a) == 0:
        return pts.astype(int)
    steps = np.maximum(np.abs(b - a).max(axis=1).astype(np.int64), 1)
    total = int(steps.sum())
    if total > _MAX_SAMPLES:
        steps = np.maximum(steps * _MAX_SAMPLES // total, 1)
        total = int(steps.sum())
    seg = np.repeat(np.arange(len(a)), steps)
    t = (np.arange(total) - np.repeat(np.cumsum(steps) - steps, steps)) / steps[seg]
    dots = np.rint(np.vstack([a[seg] + (b - a)[seg] * t[:, None], pts[-1:]])).astype(int)
    if dashed and len(dots) > 1:
        dots = dots[moved(dots)]
        dots = dots[(np.arange(len(dots)) // 2) % 2 == 0]
    return dots


def braille(dots: np.ndarray, rows: int, cols: int) -> np.ndarray:
    """Braille bit pattern per cell (rows, cols) from dot positions."""
    mask = np.zeros((rows * 4, cols * 2), dtype=bool)
    if len(dots):
        c, r = dots[:, 0], dots[:, 1]
        ok = (c >= 0) & (c < cols * 2) & (r >= 0) & (r < rows * 4)
        mask[r[ok], c[ok]] = True
    return (mask.reshape(rows, 4, cols, 2) * _BITS[None, :, None, :]).sum(axis=(1, 3))


def cells_covered(poly: np.ndarray, rows: int, cols: int) -> np.ndarray:
    """(rows, cols) bool: cells the closed outline `poly` (dot units) passes through or encloses.

    Even-odd rule at each cell's centre, vectorised over cells x edges; a
    region smaller than a cell still shades the cell its outline touches.
    """
    out = np.zeros((rows, cols), dtype=bool)
    if len(poly) == 0:
        return out
    dots = line_dots(poly, True, False)
    c, r = dots[:, 0] // 2, dots[:, 1] // 4
    ok = (c >= 0) & (c < cols) & (r >= 0) & (r < rows)
    out[r[ok], c[ok]] = True
    if len(poly) >= 3:
        cy, cx = np.mgrid[0:rows, 0:cols]
        px, py = (cx * 2 + 0.5).ravel(), (cy * 4 + 1.5).ravel()
        a, b = poly, np.roll(poly, -1, axis=0)
        ya, yb = a[:, 1][None, :], b[:, 1][None, :]
        with np.errstate(divide="ignore", invalid="ignore"):
            cross = (ya > py[:, None]) != (yb > py[:, None])
            x_at = a[:, 0][None, :] + (py[:, None] - ya) * (b[:, 0] - a[:, 0])[None, :] / (yb - ya)
            inside = (cross & (px[:, None] < x_at)).sum(axis=1) % 2 == 1
        out |= inside.reshape(rows, cols)
    return out
