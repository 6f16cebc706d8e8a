"""EnvelopeChart: a CG envelope, loadings and a burn path drawn with braille dots.

Pure drawing. The caller hands over numbers already in display units (the
polygon, this loadout's point, the other loadouts' points, a sequence path
and the index of its least-margin step); nothing here computes mass
properties. Each cell holds 2x4 braille dots for the envelope edges and the
path; the markers are whole-cell glyphs that differ in shape, an optional
`region` (the CG uncertainty ellipse) shades the cells it covers with its own
glyph, and a legend names every mark in words, so nothing depends on colour
alone.

The picture is rasterised with numpy once per (size, data, style) and kept
as Strips; `render_line` only hands them out (Textual's Line API).
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np
from rich.segment import Segment
from textual.events import Resize
from textual.strip import Strip
from textual.widget import Widget

from steelyard.io.report.raster import (braille, cells_covered, clean_label, finite_point, finite_rows, fmt_tick,
                           line_dots, nice_ticks)

POINT, OTHER, WORST, REGION = "●", "○", "✖", "░"
EDGE_SAMPLE, PATH_SAMPLE = "⠒⠒⠒", "⠒ ⠒"
NO_DATA = "No envelope or loading to chart."
TOO_SMALL = "Chart needs more room."
TOO_WIDE = "Values too far apart to chart."

# style ids -> component classes
_PLAIN, _AXIS, _EDGE, _PATH, _OTHER, _WORST, _POINT, _REGION = range(8)
_COMPONENTS = ("", "envelope-chart--axis", "envelope-chart--edge", "envelope-chart--path",
               "envelope-chart--other", "envelope-chart--worst", "envelope-chart--point",
               "envelope-chart--region")

Run = tuple[str, int]  # text, style id


class _Picture:
    """The chart's content for one size: a list of rows, each a list of runs."""

    def __init__(self, width: int, height: int, data: dict) -> None:
        self.w, self.h, self.d = width, height, data
        self.exact: set[int] = set()  # rows known to be exactly w single-width cells

    def _legend(self, drawn: dict, short: bool) -> list[list[Run]]:
        entries: list[list[Run]] = []
        if drawn["edge"]:
            entries.append([(EDGE_SAMPLE[:2] if short else EDGE_SAMPLE, _EDGE), (" envelope", _PLAIN)])
        else:
            entries.append([("no envelope polygon", _PLAIN)])
        if drawn["path"]:
            entries.append([(PATH_SAMPLE, _PATH), (" path", _PLAIN)])
        if drawn["point"]:
            entries.append([(POINT, _POINT), (" loadout" if short else " this loadout", _PLAIN)])
        if drawn["others"]:
            names = ", ".join(clean_label(n) for n in drawn["others"])
            if len(names) > 40:
                names = names[:39] + "…"
            entries.append([(OTHER, _OTHER), (" other loadouts" if short else f" other loadouts: {names}",
                                              _PLAIN)])
        if drawn["worst"]:
            entries.append([(WORST, _WORST), (" least margin", _PLAIN)])
        if drawn["region"]:
            label = clean_label(self.d["region_label"])
            entries.append([(REGION, _REGION), (" " + (label if not short else label.split(" (")[0]), _PLAIN)])
        lines: list[list[Run]] = [[]]
        used = 0
        for e in entries:
            n = sum(len(t) for t, _ in e)
            if lines[-1] and used + 2 + n > self.w:
                lines.append([])
                used = 0
            if lines[-1]:
                lines[-1].append(("  ", _PLAIN))
                used += 2
            lines[-1].extend(e)
            used += n
        return lines

    def rows(self) -> list[list[Run]]:
        d, w, h = self.d, self.w, self.h
        poly, path, region = d["polygon"], d["path"], d["region"]
        point, others = d["point"], d["others"]
        worst = d["worst"] if path is not None and d["worst"] is not None and 0 <= d["worst"] < len(path) else None
        none = np.zeros((0, 2))
        allpts = np.vstack([poly, none if path is None else path, none if point is None else np.array([point]),
                            np.array([(x, y) for _, x, y in others]).reshape(-1, 2),
                            none if region is None else region])
        if w <= 0 or h <= 0:
            return []
        if len(allpts) == 0:
            return [[(NO_DATA, _PLAIN)]] + [[] for _ in range(h - 1)]
        drawn = {"edge": len(poly) >= 2, "path": path is not None and len(path) > 0,
                 "point": point is not None, "others": [n for n, _, _ in others], "worst": worst is not None,
                 "region": region is not None}
        legend = self._legend(drawn, short=False)
        if len(legend) > 2:
            legend = min(legend, self._legend(drawn, short=True), key=len)
        legend = legend[: max(1, h - 3)]
        top, xlab, axis = 1, 1, 1
        plot_h = h - len(legend) - top - xlab - axis - 1  # 1: x tick row
        if plot_h < 4:
            xlab, plot_h = 0, plot_h + 1  # x label joins the top row
        if plot_h < 3:
            axis, plot_h = 0, plot_h + 1
        if plot_h < 2:
            top, plot_h = 0, plot_h + 1
        lo = np.array([allpts[:, 0].min(), allpts[:, 1].min()])
        hi = np.array([allpts[:, 0].max(), allpts[:, 1].max()])
        with np.errstate(over="ignore", invalid="ignore"):
            span = hi - lo
            pad = np.where(span > 0, span * 0.04, np.maximum(np.abs(lo) * 0.05, 1.0))
            lo, hi = lo - pad, hi + pad
            finite = np.isfinite(hi - lo).all() and (hi - lo > 0).all()
        if not finite:
            return [[(TOO_WIDE, _PLAIN)]] + [[] for _ in range(h - 1)]
        yt, yd = nice_ticks(lo[1], hi[1], max(1, plot_h // 2))
        ylabels = [fmt_tick(v, yd) for v in yt]
        gutter = min(max((len(s) for s in ylabels), default=1), max(1, w // 3))
        plot_w = w - gutter - 1
        if plot_h < 1 or plot_w < 2:
            return [[(TOO_SMALL, _PLAIN)]] + [[] for _ in range(h - 1)]
        return self._chart(lo, hi, plot_w, plot_h, gutter, yt, ylabels, worst, legend, top, xlab, axis)

    def _chart(self, lo, hi, pw, ph, gutter, yt, ylabels, worst, legend, top, xlab, axis) -> list[list[Run]]:
        d, w = self.d, self.w
        x0 = gutter + 1
        sx = (pw * 2 - 1) / (hi[0] - lo[0])
        sy = (ph * 4 - 1) / (hi[1] - lo[1])

        def to_dots(a: np.ndarray) -> np.ndarray:
            return np.column_stack([(a[:, 0] - lo[0]) * sx, (hi[1] - a[:, 1]) * sy])

        grid_rows = ph + axis + 1
        codes = np.full((grid_rows, w), 0x20, dtype=np.uint32)
        style = np.zeros((grid_rows, w), dtype=np.int8)
        edge = braille(line_dots(to_dots(d["polygon"]), True, False), ph, pw)
        path = d["path"]
        trail = braille(line_dots(to_dots(path), False, True), ph, pw) if path is not None else 0 * edge
        bits = edge | trail
        shade = cells_covered(to_dots(d["region"]), ph, pw) if d["region"] is not None else None
        blank = np.full_like(bits, 0x20) if shade is None else np.where(shade, ord(REGION), 0x20)
        codes[:ph, x0:] = np.where(bits > 0, 0x2800 + bits, blank)
        style[:ph, x0:] = np.where(edge > 0, _EDGE, np.where(trail > 0, _PATH,
                                                             _PLAIN if shade is None else np.where(shade, _REGION,
                                                                                                   _PLAIN)))

        def mark(x: float, y: float, glyph: str, sid: int) -> None:
            c, r = to_dots(np.array([[x, y]]))[0]
            r, c = min(max(int(r) // 4, 0), ph - 1), min(max(int(c) // 2, 0), pw - 1)
            codes[r, x0 + c], style[r, x0 + c] = ord(glyph), sid

        for _, x, y in d["others"]:
            mark(x, y, OTHER, _OTHER)
        if worst is not None:
            mark(*path[worst], WORST, _WORST)
        if d["point"] is not None:
            mark(*d["point"], POINT, _POINT)
        # y axis and its ticks
        codes[:ph, gutter] = ord("│")
        style[:ph, gutter] = _AXIS
        for v, text in zip(yt, ylabels):
            r = int((hi[1] - v) * sy) // 4
            if 0 <= r < ph:
                codes[r, gutter] = ord("┤")
                if len(text) > gutter:
                    continue  # a cut number would mislead; the tick mark stays
                codes[r, gutter - len(text):gutter] = [ord(ch) for ch in text]
                style[r, gutter - len(text):gutter] = _AXIS
        # x axis and its ticks
        tick_row = ph + axis
        if axis:
            codes[ph, gutter] = ord("└")
            codes[ph, x0:] = ord("─")
            style[ph, gutter:] = _AXIS
        xt, xd = nice_ticks(lo[0], hi[0], max(1, pw // 9))
        end = -1
        for v in xt:
            c = x0 + int((v - lo[0]) * sx) // 2
            text = fmt_tick(v, xd)
            start = min(max(c - len(text) // 2, x0 - 1), w - len(text))
            if start <= end or start < 0:
                continue
            if axis and x0 <= c < w:
                codes[ph, c] = ord("┬")
            codes[tick_row, start:start + len(text)] = [ord(ch) for ch in text]
            style[tick_row, start:start + len(text)] = _AXIS
            end = start + len(text)
        out: list[list[Run]] = []
        ylab, xlab_text = clean_label(d["y_label"]), clean_label(d["x_label"])
        if top:
            out.append([(ylab if xlab else f"{ylab}  (across: {xlab_text})", _PLAIN)])
        self.exact = set(range(len(out), len(out) + grid_rows))
        for r in range(grid_rows):
            text = codes[r].tobytes().decode("utf-32-le")
            sid = style[r]
            cuts = np.flatnonzero(np.diff(sid)) + 1
            bounds = [0, *cuts.tolist(), w]
            out.append([(text[a:b], int(sid[a])) for a, b in zip(bounds[:-1], bounds[1:])])
        if xlab:
            out.append([(xlab_text.rjust(w) if len(xlab_text) < w else xlab_text, _PLAIN)])
        out.extend(legend)
        return out


class EnvelopeChart(Widget):
    """A CG envelope with the current point, other loadouts, a path and its worst step."""

    DEFAULT_CSS = """
    EnvelopeChart { height: 1fr; min-height: 6; }
    EnvelopeChart > .envelope-chart--edge { color: $primary; }
    EnvelopeChart > .envelope-chart--path { color: $secondary; }
    EnvelopeChart > .envelope-chart--point { color: $warning; text-style: bold; }
    EnvelopeChart > .envelope-chart--other { color: $foreground; }
    EnvelopeChart > .envelope-chart--worst { color: $error; text-style: bold; }
    EnvelopeChart > .envelope-chart--axis { color: $text-muted; }
    EnvelopeChart > .envelope-chart--region { color: $accent; }
    """
    COMPONENT_CLASSES = set(_COMPONENTS[1:])

    def __init__(self, *, name: str | None = None, id: str | None = None,
                 classes: str | None = None) -> None:
        super().__init__(name=name, id=id, classes=classes)
        self._data: dict = self._pack(None, None, [], None, None, "CG", "mass")
        self._cache: tuple[tuple, list[Strip]] | None = None

    @staticmethod
    def _pack(polygon, point, others, path, worst, x_label, y_label, region=None,
              region_label="CG uncertainty") -> dict:
        kept = []
        for entry in others or ():
            try:
                n, x, y = entry
                x, y = float(x), float(y)
            except (TypeError, ValueError):
                continue
            if math.isfinite(x) and math.isfinite(y):
                kept.append((str(n), x, y))
        p = None if path is None else finite_rows(path)
        try:
            worst = None if worst is None else int(worst)
        except (TypeError, ValueError):
            worst = None
        r = None if region is None else finite_rows(region)
        return {"polygon": finite_rows(polygon), "point": finite_point(point), "others": kept,
                "path": p if p is not None and len(p) else None, "worst": worst,
                "x_label": str(x_label), "y_label": str(y_label),
                "region": r if r is not None and len(r) else None, "region_label": str(region_label)}

    def set_data(self, polygon: np.ndarray | None, point: tuple[float, float] | None = None,
                 others: Sequence[tuple[str, float, float]] = (), path: np.ndarray | None = None,
                 worst: int | None = None, x_label: str = "CG", y_label: str = "mass",
                 region: np.ndarray | None = None, region_label: str = "CG uncertainty") -> None:
        """Replace what is drawn. Values in display units; polygon (k, 2) and path (p, 2) as [cg, mass].

        `worst` indexes `path` (the least-margin state). Rows with NaN are dropped,
        so a half-filled sequence still draws. `region` (r, 2) is a closed outline
        (e.g. the 2σ ellipse of the CG) whose cells are shaded with REGION and
        named `region_label` in the legend.
        """
        self._data = self._pack(polygon, point, others, path, worst, x_label, y_label, region, region_label)
        self._cache = None
        self.refresh()

    def clear(self) -> None:
        """Draw nothing but the no-data message."""
        self.set_data(None)

    @property
    def has_data(self) -> bool:
        d = self._data
        return bool(len(d["polygon"]) or d["point"] or d["others"] or d["path"] is not None
                    or d["region"] is not None)

    def on_resize(self, event: Resize) -> None:
        self._cache = None
        self.refresh()

    def notify_style_update(self) -> None:
        self._cache = None
        super().notify_style_update()

    def _strips(self) -> list[Strip]:
        width, height = self.size
        key = (width, height)
        if self._cache is not None and self._cache[0] == key:
            return self._cache[1]
        base = self.visual_style.rich_style
        styles = [base] + [base + self.get_component_rich_style(c) for c in _COMPONENTS[1:]]
        strips = []
        picture = _Picture(width, height, self._data)
        for i, runs in enumerate(picture.rows()):
            segs = [Segment(text, styles[sid]) for text, sid in runs if text]
            if i in picture.exact:
                strips.append(Strip(segs, width))
            else:
                strips.append(Strip(segs).crop(0, width).adjust_cell_length(width, base))
        self._cache = (key, strips)
        return strips

    def render_line(self, y: int) -> Strip:
        strips = self._strips()
        if 0 <= y < len(strips):
            return strips[y]
        return Strip.blank(self.size.width, self.visual_style.rich_style)

    def picture_text(self) -> str:
        """The chart as plain text at its current size (for tests and screen readers' copy)."""
        return "\n".join(s.text for s in self._strips())
