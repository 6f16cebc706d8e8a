"""The few lines under the ledger: total mass, CG, every envelope's status, the limits, room left.

Envelopes and limits are scoped as `steelyard check` scopes them (Totals.check).

They repaint on every edit, so an engineer sees the totals move without
leaving the table. The caution sits here too, because envelope status does.
"""

from __future__ import annotations

import time

from rich.text import Text
from textual.widgets import Static

from steelyard.core.caution import CAUTION
from steelyard.core.display import AXIS_NAMES, DisplayUnits, fmt, pretty_unit
from steelyard.core.document.model import Frame
from steelyard.core.limits.limit_words import limit_line, room_line
from steelyard.tui.state.session import Totals
from steelyard.tui.state.shown import SHORT_CAUTION, envelope_line
from steelyard.tui.text import clean


def summary_text(totals: Totals, frame: Frame, du: DisplayUnits, width: int = 78) -> Text:
    t = Text(no_wrap=False)
    if totals.error is not None:
        t.append("Loadout cannot be applied: ", style="bold")
        t.append(clean(totals.error))
        return t
    mp = totals.mp
    t.append("Mass ", style="bold")
    t.append(f"{fmt(du.m(mp.mass))} {pretty_unit(du.mass)}")
    t.append(f"  CG [{pretty_unit(du.length)}] ", style="bold")
    t.append("  ".join(f"{AXIS_NAMES[k]} {fmt(du.l(mp.cg[k]))} {frame.direction(k)}" for k in range(3)))
    lines = [clean(envelope_line(r, frame, du, totals.applies(r.name))) for r in totals.envelopes]
    lines += [clean(limit_line(f, du)) for f in totals.limits if f.applies]
    joined = " │ ".join(lines)
    for line in ([joined] if len(joined) <= width else lines) if lines else ():
        t.append("\n" + line)
    if totals.envelopes or totals.limits:
        t.append("\n" + clean(room_line(totals.room, du)))
    if totals.envelopes:
        t.append("\n")
        t.append(CAUTION if width >= 2 * len(CAUTION) else SHORT_CAUTION, style="italic")
    return t


class SummaryStrip(Static):
    def __init__(self, **kw) -> None:
        super().__init__("", **kw)
        self.painted_at: float | None = None
        self._lines = -1

    def show(self, totals: Totals, frame: Frame, du: DisplayUnits) -> None:
        width = max(40, self.size.width - 2)
        text = summary_text(totals, frame, du, width)
        lines = len(text.wrap(self.app.console, width))
        # same height: repaint the strip only, without laying out the screen again
        self.update(text, layout=lines != self._lines)
        self._lines = lines

    def render(self):
        self.painted_at = time.perf_counter()
        return super().render()
