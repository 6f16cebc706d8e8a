"""The mass history of a ledger in git: the table every output shares, the date axis, and an SVG plot.

`trend_section` is what the report asks for: the history of its source, or
None when the file is not in a git repository or was never committed.
`trend_table` gives the rows (the report and `steelyard trend` print the
same cells); `trend_svg` draws basic and predicted mass against commit date
with the allocation as a step line, by hand, as an inline SVG: axes, ticks,
units and a legend, every piece of text escaped.
"""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass
from steelyard.io.report.svg import esc as escape  # XML 1.0 safe, entities for & < > "

import numpy as np

from steelyard.core.display import AXIS_NAMES, DisplayUnits, pretty_unit
from steelyard.core.numbers import cell
from steelyard.core.errors import SteelyardError
from steelyard.core.history.trend import Trend
from steelyard.io.report.chart import ticks
from steelyard.io.report.text import clean

#: hex digits of a commit shown in tables
SHORT = 7
#: colours of the three lines (the same in the terminal chart)
COLOURS = {"mass": "#1f77b4", "predicted": "#d98200", "allocation": "#c0392b"}


def trend_section(source: str) -> Trend | None:
    """The history of the report's ledger (variable items empty), or None without one."""
    from steelyard.io.vcs.ledger_at import trend_of

    try:
        t = trend_of(source)
    except SteelyardError:  # not in a repository, no git: the report simply has no history section
        return None
    return t if t.points else None


def when(date: str) -> float | None:
    """Seconds since the epoch of an ISO 8601 commit date (None if unreadable)."""
    try:
        return dt.datetime.fromisoformat(date).timestamp()
    except ValueError:
        return None


def shown_date(date: str) -> str:
    """'2026-03-01T14:30:00+01:00' -> '2026-03-01 14:30' (the committer's own clock)."""
    return date[:16].replace("T", " ") if len(date) >= 16 else date


@dataclass(frozen=True)
class Series:
    """Readable points in display units: time (s), basic, predicted and allocation (NaN where none)."""

    t: np.ndarray
    mass: np.ndarray
    predicted: np.ndarray
    allocation: np.ndarray

    def __len__(self) -> int:
        return len(self.t)


def series(trend: Trend, du: DisplayUnits) -> Series:
    rows = [(when(p.date), p.figures) for p in trend.read]
    rows = [(t, f) for t, f in rows if t is not None]

    def col(get) -> np.ndarray:
        return np.array([np.nan if get(f) is None else du.m(get(f)) for _, f in rows], dtype=float)

    return Series(np.array([t for t, _ in rows], dtype=float), col(lambda f: f.mass_kg),
                  col(lambda f: f.predicted_kg), col(lambda f: f.allocation_kg))


_STEPS = [60 * m for m in (1, 5, 15, 30, 60, 180, 360, 720)]
_STEPS += [86400 * d for d in (1, 2, 7, 14, 30, 61, 91, 182, 365, 730, 1826)]



def mass_range(s) -> tuple[float, float]:
    """The plotted mass axis: every finite mass, predicted and allocation value, padded 8 % (or a little)."""
    values = np.concatenate([s.mass, s.predicted, s.allocation])
    values = values[np.isfinite(values)]
    lo, hi = float(values.min()), float(values.max())
    pad = 0.08 * (hi - lo) if hi > lo else max(abs(hi) * 0.05, 1.0)
    return lo - pad, hi + pad

def date_ticks(t0: float, t1: float, count: int = 5) -> list[tuple[float, str]]:
    """About `count` round instants in [t0, t1] (UTC minutes, hours or midnights) with their labels.

    When no round instant falls inside (a short span), the two ends are labelled instead.
    """
    span = t1 - t0
    if not span > 0 or count < 1:
        return [(t0, _label(t0, 60))]
    step = next((s for s in _STEPS if span / s <= count), _STEPS[-1] * math.ceil(span / count / _STEPS[-1]))
    out = []
    t = math.ceil(t0 / step) * step
    while t <= t1 + 1e-6:
        out.append((t, _label(t, step)))
        t += step
    if len(out) < 2:
        fine = 60 if span < 2 * 86400 else 86400
        out = [(t0, _label(t0, fine)), (t1, _label(t1, fine))]
    return out


def _label(t: float, step: float) -> str:
    d = dt.datetime.fromtimestamp(t, dt.timezone.utc)
    return d.strftime("%Y-%m-%d %H:%M") if step < 86400 else d.strftime("%Y-%m-%d")


def trend_table(trend: Trend, du: DisplayUnits) -> tuple[list[str], list[list[str]], set[int]]:
    """(headers, rows, right-aligned columns) of the history; a revision not read has its reason in the subject."""
    mu, lu = pretty_unit(du.mass), pretty_unit(du.length)
    read = trend.read
    # one count of decimals per dimension for the whole history (docs/numbers.md)
    dm = du.column_decimals([p.figures.mass_kg for p in read], "mass")
    dl = du.column_decimals([c for p in read if p.figures.cg_m for c in p.figures.cg_m], "length")
    grown = any(p.figures.predicted_kg is not None for p in read)
    budget = any(p.figures.allocation_kg is not None for p in read)
    headers = ["date", "commit", "subject", f"mass [{mu}]", f"Δ mass [{mu}]"]
    headers += [f"predicted [{mu}]"] if grown else []
    headers += [f"allocation [{mu}]", f"margin [{mu}]"] if budget else []
    headers += [f"CG {a} [{lu}]" for a in AXIS_NAMES]

    def m(kg):
        return cell(None if kg is None else du.m(kg), dm)

    rows, last = [], None
    for p in trend.points:
        f = p.figures
        head = [shown_date(p.date), p.rev[:SHORT], clean(p.subject)]
        if f is None:
            rows.append([head[0], head[1], f"{head[2]} (not read: {clean(p.reason)})"]
                        + ["—"] * (len(headers) - 3))
            continue
        delta = "—" if last is None else ("+" if f.mass_kg >= last else "") + m(f.mass_kg - last)
        last = f.mass_kg
        row = head + [m(f.mass_kg), delta]
        row += [m(f.predicted_kg)] if grown else []
        row += [m(f.allocation_kg), m(f.margin_kg)] if budget else []
        row += [cell(None if f.cg_m is None else du.l(c), dl) for c in (f.cg_m or (None, None, None))]
        rows.append(row)
    return headers, rows, set(range(3, len(headers)))


def what_of(trend: Trend) -> str:
    """'the whole vehicle' or 'group "avionics"', and the loadout."""
    who = f"group {trend.group!r} and its subgroups" if trend.group else "the whole vehicle"
    return who + (f", loadout {trend.loadout!r}" if trend.loadout else ", variable items empty")


# ------------------------------------------------------------------ SVG plot
_W, _H = 760, 360
_LEFT, _RIGHT, _TOP, _BOTTOM = 84, 740, 24, 270


def _fmt_value(v: float, decimals: int) -> str:
    s = f"{v:,.{decimals}f}"
    return "0" if s.strip("-0.,") == "" else s


def trend_svg(trend: Trend, du: DisplayUnits) -> str:
    """Basic mass, predicted mass and allocation against commit date as one inline SVG element."""
    s = series(trend, du)
    mu = escape(pretty_unit(du.mass))
    if len(s) == 0:
        return ""
    lo, hi = mass_range(s)
    t0, t1 = float(s.t.min()), float(s.t.max())
    margin = 0.03 * (t1 - t0) if t1 > t0 else 86400.0  # the first and last points clear of the frame
    t0, t1 = t0 - margin, t1 + margin

    def px(t):
        return _LEFT + (np.asarray(t, dtype=float) - t0) / (t1 - t0) * (_RIGHT - _LEFT)

    def py(v):
        return _BOTTOM - (np.asarray(v, dtype=float) - lo) / (hi - lo) * (_BOTTOM - _TOP)

    out = [f'<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {_W} {_H}" width="{_W}" height="{_H}" '
           f'role="img" aria-label="mass history: mass in {mu} against commit date" '
           'font-family="system-ui, sans-serif" font-size="12">',
           f'<rect x="{_LEFT}" y="{_TOP}" width="{_RIGHT - _LEFT}" height="{_BOTTOM - _TOP}" fill="none" '
           'stroke="#999"/>']
    yt, yd = ticks(lo, hi, 6)
    for v in yt:
        y = float(py(v))
        out.append(f'<line x1="{_LEFT - 5}" y1="{y:.1f}" x2="{_RIGHT}" y2="{y:.1f}" stroke="#e3e3e3"/>')
        out.append(f'<line x1="{_LEFT - 5}" y1="{y:.1f}" x2="{_LEFT}" y2="{y:.1f}" stroke="#555"/>')
        out.append(f'<text x="{_LEFT - 8}" y="{y + 4:.1f}" text-anchor="end">{escape(_fmt_value(v, yd))}</text>')
    for t, label in date_ticks(t0, t1, 6):
        x = float(px(t))
        out.append(f'<line x1="{x:.1f}" y1="{_BOTTOM}" x2="{x:.1f}" y2="{_BOTTOM + 5}" stroke="#555"/>')
        out.append(f'<text x="{x:.1f}" y="{_BOTTOM + 19}" text-anchor="middle">{escape(label)}</text>')
    out.append(f'<text x="{(_LEFT + _RIGHT) / 2:.0f}" y="{_BOTTOM + 40}" text-anchor="middle">'
               'commit date (UTC)</text>')
    out.append(f'<text transform="translate(18 {(_TOP + _BOTTOM) / 2:.0f}) rotate(-90)" '
               f'text-anchor="middle">mass [{mu}]</text>')
    legend = []
    for key, ys, dash, name in (("allocation", s.allocation, "", "allocation (not-to-exceed)"),
                                ("predicted", s.predicted, ' stroke-dasharray="6 4"', "predicted (with growth)"),
                                ("mass", s.mass, "", "basic mass")):
        ok = np.isfinite(ys)
        if not ok.any():
            continue
        xs_, ys_ = px(s.t[ok]), py(ys[ok])
        if key == "allocation":  # a budget holds until the next commit changes it: a step line
            xs_, ys_ = np.repeat(xs_, 2)[1:], np.repeat(ys_, 2)[:-1]
        pts = " ".join(f"{x:.1f},{y:.1f}" for x, y in zip(xs_, ys_))
        out.append(f'<polyline points="{pts}" fill="none" stroke="{COLOURS[key]}" stroke-width="2"{dash}/>')
        if key != "allocation":
            out += [f'<circle cx="{x:.1f}" cy="{y:.1f}" r="2.5" fill="{COLOURS[key]}"/>'
                    for x, y in zip(px(s.t[ok]), py(ys[ok]))]
        legend.append((key, dash, name))
    x = _LEFT
    for key, dash, name in reversed(legend):
        y = _H - 12
        out.append(f'<line x1="{x}" y1="{y - 4}" x2="{x + 26}" y2="{y - 4}" stroke="{COLOURS[key]}" '
                   f'stroke-width="2"{dash}/>')
        out.append(f'<text x="{x + 32}" y="{y}">{escape(name)}</text>')
        x += 40 + 7 * len(name)
    out.append("</svg>")
    return "\n".join(out)
