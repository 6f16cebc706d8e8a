"""What an edit will do, before it is applied: Δmass, ΔCG, each margin before → after, room left.

Envelopes and limits whose scope leaves the loadout out say so (Totals.check).
"""

from __future__ import annotations

from rich.text import Text

from steelyard.core.display import AXIS_NAMES, DisplayUnits, fmt, pretty_unit
from steelyard.core.document.model import Frame
from steelyard.tui.state.session import Totals
from steelyard.core.limits.limit_words import KIND_WORDS, room_line
from steelyard.tui.state.shown import NOT_APPLICABLE, nearer_limit, signed, status_word
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
        if not after.applies(ra.name):
            t.append(f": {NOT_APPLICABLE}\n")
            continue
        side = nearer_limit(ra, frame)
        if ra.margin is None or rb.margin is None:
            t.append(f": {status_word(rb)} → {status_word(ra)}\n")
            continue
        t.append(f": margin {du.num(rb.margin, 'length')} → {du.num(ra.margin, 'length')} {lu} "
                 f"(Δ {signed(du.l(ra.margin - rb.margin))}) to the {side} limit, {status_word(ra)}\n")
    for fa in after.limits:
        if not fa.applies:
            continue
        fb = before.finding(fa.kind, fa.name)
        unit = {"mass": mu, "length": lu}.get(fa.dimension, pretty_unit(du.inertia))
        conv = {"mass": du.m, "length": du.l}.get(fa.dimension, du.i)
        t.append(f"{KIND_WORDS[fa.kind]} {clean(fa.name)}", style="bold")
        if fb is None or fb.margin is None or fa.margin is None or not fb.applies:
            t.append(": " + ("ok" if fa.ok else "BROKEN") + "\n")
            continue
        t.append(f": margin {fmt(conv(fb.margin))} → {fmt(conv(fa.margin))} {unit}, {'ok' if fa.ok else 'BROKEN'}\n")
    if after.envelopes or after.limits:
        t.append(clean(room_line(after.room, du)) + "\n")
    t.rstrip()
    return t
