"""What an edit will do, before it is applied: Δmass, ΔCG, and each margin before → after."""

from __future__ import annotations

from rich.text import Text

from steelyard.core.display import AXIS_NAMES, DisplayUnits, fmt, pretty_unit
from steelyard.core.document.model import Frame
from steelyard.tui.state.session import Totals
from steelyard.tui.state.shown import nearer_limit, signed, status_word
from steelyard.tui.text import clean


def preview_text(before: Totals, after: Totals, frame: Frame, du: DisplayUnits) -> Text:
    t = Text()
    if after.error is not None:
        t.append("The loadout could not be applied after this change: " + clean(after.error))
        return t
    if before.mp is None:
        t.append("(no totals before the change)")
        return t
    mu, lu = pretty_unit(du.mass), pretty_unit(du.length)
    b, a = before.mp, after.mp
    t.append("Δmass ", style="bold")
    t.append(f"{signed(du.m(a.mass - b.mass))} {mu} (total {du.num(a.mass, 'mass')} {mu})\n")
    t.append("ΔCG ", style="bold")
    t.append("  ".join(f"{AXIS_NAMES[k]} {signed(du.l(a.cg[k] - b.cg[k]))}" for k in range(3)) + f" {lu}\n")
    for rb, ra in zip(before.envelopes, after.envelopes):
        t.append(clean(ra.name), style="bold")
        side = nearer_limit(ra, frame)
        if ra.margin is None or rb.margin is None:
            t.append(f": {status_word(rb)} → {status_word(ra)}\n")
            continue
        t.append(f": margin {du.num(rb.margin, 'length')} → {du.num(ra.margin, 'length')} {lu} "
                 f"(Δ {signed(du.l(ra.margin - rb.margin))}) to the {side} limit, {status_word(ra)}\n")
    t.rstrip()
    return t
