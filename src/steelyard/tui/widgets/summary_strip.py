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
from steelyard.core.limits.limit_words import limit_short, room_line
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
    t.append(f"{du.num(mp.mass, 'mass')} {pretty_unit(du.mass)}")
    t.append(f"  CG [{pretty_unit(du.length)}] ", style="bold")
    t.append("  ".join(f"{AXIS_NAMES[k]} {du.num(mp.cg[k], 'length')} {frame.direction(k)}" for k in range(3)))
    parts = [clean(envelope_line(r, frame, du, totals.applies(r.name))) for r in totals.envelopes]
    # mass limits always, other limits when broken: the strip keeps to a few lines (all: envelopes view)
    shown = [f for f in totals.limits if f.applies and (f.kind == "mass" or not f.ok)]
    parts += [clean("limit " + limit_short(f, du)) for f in shown]
    rest = sum(f.applies for f in totals.limits) - len(shown)
    if rest:
        parts.append(f"{rest} more limit{'s' if rest > 1 else ''} ok (3: envelopes view)")
    if totals.envelopes or totals.limits:
        parts.append(clean(room_line(totals.room, du)))
    for line in pack(parts, width):
        t.append("\n" + line)
    if totals.envelopes or totals.limits:
        t.append("\n")
        t.append(CAUTION if width >= 2 * len(CAUTION) else SHORT_CAUTION, style="italic")
    return t


def pack(parts: list[str], width: int, sep: str = " │ ") -> list[str]:
    """Parts joined into as few lines of `width` as they fit in, in order (a long part has its own line)."""
    lines: list[str] = []
    for part in parts:
        if lines and len(lines[-1]) + len(sep) + len(part) <= width:
            lines[-1] += sep + part
        else:
            lines.append(part)
    return lines


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
