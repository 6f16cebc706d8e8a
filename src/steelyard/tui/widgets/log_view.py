"""The change log view: who changed what, when, and what it did to the totals.

The log itself lives in the ledger file (see docs/tui.md); this only lists
it, newest first, with each change's Δmass, ΔCG and Δmargin per envelope.
"""

from __future__ import annotations

import datetime as dt

from rich.text import Text
from textual.containers import VerticalScroll
from textual.widgets import Static

from steelyard.core.display import AXIS_NAMES, DisplayUnits, pretty_unit
from steelyard.tui.state.shown import signed
from steelyard.tui.text import clean


def when(value: object) -> str:
    if isinstance(value, (int, float)):
        return dt.datetime.fromtimestamp(value).strftime("%Y-%m-%d %H:%M:%S")
    if isinstance(value, dt.datetime):
        return value.strftime("%Y-%m-%d %H:%M:%S")
    return clean(value)


def effect_text(effect, du: DisplayUnits) -> str:
    if effect is None:
        return ""
    lu = pretty_unit(du.length)
    parts = [f"Δmass {signed(du.m(effect.d_mass))} {pretty_unit(du.mass)}"]
    parts.append("ΔCG " + " ".join(f"{AXIS_NAMES[k]} {signed(du.l(effect.d_cg[k]))}" for k in range(3)) + f" {lu}")
    for name, d in effect.d_margin:
        if d is None:  # undefined (outside the envelope's mass range): the file leaves it out too
            continue
        parts.append(f"Δmargin {clean(name)} {signed(None if d is None else du.l(d))} {lu}")
    return "; ".join(parts)


def reason_text(c) -> str:
    """'why: <reason> (request CR-12)', or '' when the change carries neither."""
    parts = []
    if c.reason:
        parts.append(f"why: {clean(c.reason)}")
    if c.request:
        parts.append(f"(request {clean(c.request)})" if parts else f"request {clean(c.request)}")
    return " ".join(parts)


def log_text(history, du: DisplayUnits) -> Text:
    t = Text()
    log = list(history.log)  # the caller flushed deferred edits (Session.log)
    t.append(f"Change log: {len(log)} change(s)", style="bold")
    t.append(f"   undo {'available' if history.can_undo else 'none'}, redo {'available' if history.can_redo else 'none'}\n")
    t.append("Saved with the ledger as [[change]] tables; newest first.\n\n", style="dim")
    for c in reversed(log):
        t.append(f"{when(c.time)}  ", style="bold")
        t.append(clean(c.author))
        t.append(f"  {clean(c.action)}")
        if c.item:
            t.append(f" {clean(c.item)}")
        t.append("\n    " + clean(c.summary) + "\n")
        note = reason_text(c)
        if note:
            t.append("    " + note + "\n", style="italic")
        eff = effect_text(c.effect, du)
        if eff:
            t.append("    " + eff + "\n")
    if not log:
        t.append("No changes yet.")
    return t


class LogView(VerticalScroll):
    def compose(self):
        yield Static("", id="log-text")

    def show(self, history, du: DisplayUnits) -> None:
        self.query_one("#log-text", Static).update(log_text(history, du))
