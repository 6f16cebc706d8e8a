"""The envelopes view: status and margins in words and numbers, the chart, the caution.

Status is always written out (INSIDE / OUTSIDE, which limit, how far); the
chart repeats it as a picture. The chart takes a path for a burn or drop
sequence: `show(..., path=...)` is the seam the sequence feature plugs into.
"""

from __future__ import annotations

import numpy as np
from rich.text import Text
from textual.containers import Vertical
from textual.widgets import Static

from ..core.caution import CAUTION
from ..core.display import DisplayUnits, fmt, pretty_unit
from ..core.model import Ledger
from ..core.rollup import MassProperties
from ..core.status import AXIS_INDEX
from .chart import EnvelopeChart
from .session import Totals
from .shown import axis_label, limit_words, margin_words, status_word
from .text import clean


def status_text(totals: Totals, ledger: Ledger, du: DisplayUnits) -> Text:
    t = Text()
    if totals.error is not None:
        t.append("No envelope status: " + clean(totals.error))
        return t
    if not ledger.envelopes:
        t.append("This ledger has no CG envelopes.")
        return t
    lu, mu = pretty_unit(du.length), pretty_unit(du.mass)
    for r in totals.envelopes:
        t.append(clean(r.name), style="bold")
        t.append(f" ({r.axis}): ")
        t.append(status_word(r), style="bold")
        t.append(f" — CG {fmt(du.l(r.cg))} {lu}; ")
        if r.lo is None:
            t.append("the mass is outside the envelope's mass range")
        else:
            lo_w, hi_w = limit_words(ledger.frame, r.axis)
            t.append(f"limits {lo_w} {fmt(du.l(r.lo))} / {hi_w} {fmt(du.l(r.hi))} {lu}; ")
            t.append(margin_words(r, ledger.frame, du))
        if r.mass_margin is not None:
            t.append(f"; {fmt(du.m(r.mass_margin))} {mu} more before the mass limit")
        t.append("\n")
    return t


class EnvelopePanel(Vertical, can_focus=True):
    """Which envelope the chart shows is view state (`choice`); the rest is pushed in."""

    def __init__(self, **kw) -> None:
        super().__init__(**kw)
        self.choice = 0

    def compose(self):
        yield Static("", id="envelope-status")
        yield Static("", id="envelope-choice")
        yield EnvelopeChart(id="envelope-chart")
        yield Static(Text(CAUTION, style="italic"), id="envelope-caution")

    def next_envelope(self, step: int, count: int) -> None:
        if count:
            self.choice = (self.choice + step) % count

    def show(self, totals: Totals, ledger: Ledger, du: DisplayUnits,
             others: list[tuple[str, MassProperties]], path: np.ndarray | None = None,
             worst: int | None = None) -> None:
        self.query_one("#envelope-status", Static).update(status_text(totals, ledger, du))
        chart = self.query_one(EnvelopeChart)
        choice = self.query_one("#envelope-choice", Static)
        if not ledger.envelopes:
            choice.update("")
            chart.display = False
            return
        chart.display = True
        self.choice %= len(ledger.envelopes)
        env = ledger.envelopes[self.choice]
        k = AXIS_INDEX[env.axis]
        pts = env.array
        polygon = np.column_stack([du.l(pts[:, 0]), du.m(pts[:, 1])])
        point = None
        if totals.mp is not None and totals.mp.mass > 0 and np.isfinite(totals.mp.cg[k]):
            point = (du.l(float(totals.mp.cg[k])), du.m(totals.mp.mass))
        other = [(clean(name), du.l(float(mp.cg[k])), du.m(mp.mass)) for name, mp in others]
        more = f" ({self.choice + 1} of {len(ledger.envelopes)}; n / p: next / previous)" if len(
            ledger.envelopes) > 1 else ""
        choice.update(Text(f"Chart: {clean(env.name)}", style="bold") + Text(more, style="dim"))
        chart.set_data(polygon, point, other, path, worst,
                       x_label=f"CG {axis_label(ledger.frame, k)} [{pretty_unit(du.length)}]",
                       y_label=f"mass [{pretty_unit(du.mass)}]")
