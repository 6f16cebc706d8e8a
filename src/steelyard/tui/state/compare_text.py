"""What the compare screen says, as rich Text: totals side by side, items, envelopes.

Pure formatting of a `core.diff.LedgerDiff` in display units; every user
string (ids, names, labels) passes through `clean` and reaches the screen as
Text, never as markup. A is the reference (the loadout, file or snapshot
chosen), B the other side; every Δ is B − A.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from rich.text import Text

from steelyard.core.caution import CAUTION
from steelyard.core.history.diff import ItemEffect, LedgerDiff, change_rows
from steelyard.core.history.diff_text import definition_sections
from steelyard.core.numbers import number
from steelyard.core.display import AXIS_NAMES, DisplayUnits, fmt, pretty_unit
from steelyard.core.errors import SteelyardError
from steelyard.core.limits.rules import mac_reference
from steelyard.tui.state.shown import signed, status_word
from steelyard.tui.text import clean

#: rows in the item list (the CLI's `steelyard diff --max-items 0` gives every one)
MAX_LISTED = 500
LABEL, COLUMN = 16, 19


@dataclass(frozen=True)
class Side:
    """One side of a comparison as the user chose it."""

    label: str  # e.g. "this ledger, loadout takeoff" or "baseline.toml (snapshot)"
    ledger: object  # core.model.Ledger
    loadout: str | None
    note: str = ""  # snapshot details, or why its check failed (shown inline)
    working: bool = False  # the session's own ledger: its items can be jumped to


def _row(t: Text, label: str, a: str, b: str, d: str, style: str = "") -> None:
    t.append(f"{label:<{LABEL}}", style="bold")
    t.append(f"{a:>{COLUMN}}{b:>{COLUMN}}{d:>{COLUMN}}\n", style=style)


def heading(diff: LedgerDiff, a: Side, b: Side) -> Text:
    t = Text()
    t.append("A ", style="bold")
    t.append(clean(a.label) + "\n")
    if a.note:
        t.append("  " + clean(a.note) + "\n", style="italic")
    t.append("B ", style="bold")
    t.append(clean(b.label) + "\n")
    if b.note:
        t.append("  " + clean(b.note) + "\n", style="italic")
    if diff.identical:
        t.append("No differences: the two sides are the same item for item.", style="bold")
    else:
        t.append(f"{len(diff.added):,} added, {len(diff.removed):,} removed, {len(diff.changed):,} changed "
                 "(B against A, as carried)")
    if diff.frame:
        moved = ", ".join(f"+{k} {o} → {n}" for k, (o, n) in diff.frame.items())
        t.append(f"\nThe body frames differ ({clean(moved)}): coordinates mean different directions.", style="bold")
    if diff.tables or diff.loadout_definitions:
        t.append("\nDefinitions differ too (limits, loadouts or other tables): see tab 3.", style="bold")
    return t


def _percent_mac(ledger, x: float) -> float | None:
    try:
        ref = mac_reference(ledger)
    except SteelyardError:
        return None
    return None if ref is None or not np.isfinite(x) else float(ref.percent(x))


def totals_text(diff: LedgerDiff, du: DisplayUnits) -> Text:
    """A | B | B − A for mass, CG per axis, inertia about each side's CG and principal moments."""
    a, b = diff.a.mp, diff.b.mp
    mu, lu, iu = pretty_unit(du.mass), pretty_unit(du.length), pretty_unit(du.inertia)
    frame = diff.b.ledger.frame
    t = Text()
    _row(t, "", "A", "B", "Δ (B − A)", "bold")
    _row(t, f"mass [{mu}]", du.num(a.mass, 'mass'), du.num(b.mass, 'mass'), signed(du.m(diff.delta_mass)))
    t.append(f"CG [{lu}]\n", style="bold")
    for k in range(3):
        _row(t, f" {AXIS_NAMES[k]} (+{frame.direction(k)})", du.num(a.cg[k], 'length'), du.num(b.cg[k], 'length'),
             signed(du.l(diff.delta_cg[k])))
    pa, pb = _percent_mac(diff.a.ledger, a.cg[0]), _percent_mac(diff.b.ledger, b.cg[0])
    if pa is not None or pb is not None:
        d = None if pa is None or pb is None else pb - pa
        _row(t, " x in %MAC", fmt(pa, 2), fmt(pb, 2), signed(d, 2))
    t.append(f"Inertia about each side's CG [{iu}]\n", style="bold")
    for r, c in ((0, 0), (1, 1), (2, 2), (0, 1), (0, 2), (1, 2)):
        _row(t, f" I{AXIS_NAMES[r]}{AXIS_NAMES[c]}", du.num(a.inertia_cg[r, c], 'inertia'), du.num(b.inertia_cg[r, c], 'inertia'),
             signed(du.i(diff.delta_inertia[r, c])))
    t.append(f"Principal moments [{iu}], ascending\n", style="bold")
    if diff.delta_principal is None:
        t.append(" — (a side with no mass)\n")
    else:
        for k in range(3):
            _row(t, f" I{k + 1}", du.num(a.principal_moments[k], 'inertia'), du.num(b.principal_moments[k], 'inertia'),
                 signed(du.i(diff.delta_principal[k])))
    t.append("Tensor form: off-diagonals are minus the products of inertia ∫xy dm.", style="dim")
    return t


def _status(r) -> str:
    return "— (not on this side)" if r is None else status_word(r)


def envelopes_text(diff: LedgerDiff, du: DisplayUnits) -> Text:
    """Each envelope's status on both sides and the margin change, then the caution."""
    t = Text()
    lu = pretty_unit(du.length)
    if not diff.envelopes:
        t.append("Neither side has a CG envelope.\n")
    for e in diff.envelopes:
        t.append(clean(e.name), style="bold")
        t.append(f": {_status(e.a)} → {_status(e.b)}")
        if e.status_changed:
            t.append("  STATUS CHANGED", style="bold reverse")
        t.append("\n")
        ma = None if e.a is None or e.a.margin is None else du.l(e.a.margin)
        mb = None if e.b is None or e.b.margin is None else du.l(e.b.margin)
        d = None if e.margin_delta is None else du.l(e.margin_delta)
        f = du.factor("length")
        t.append(f"  margin {number(ma, 'length', f)} → {number(mb, 'length', f)} {lu} (Δ {signed(d)})\n")
    if diff.envelope_definitions:
        d = diff.envelope_definitions
        parts = [f"added {', '.join(map(clean, d.added))}" if d.added else "",
                 f"removed {', '.join(map(clean, d.removed))}" if d.removed else "",
                 f"changed {', '.join(clean(n) for n, _ in d.changed)}" if d.changed else ""]
        t.append("Envelope definitions differ: " + "; ".join(p for p in parts if p) + "\n", style="bold")
    t.append(definitions_text(diff, du))
    t.append("\n" + CAUTION, style="italic")
    return t


def definitions_text(diff: LedgerDiff, du: DisplayUnits) -> Text:
    """Envelopes, loadouts, limits, allocations, [mac] and the other definitions that differ, old → new by field."""
    t = Text()
    for title, lines in definition_sections(diff, du):
        if title == "Envelope definitions" and not diff.envelope_definitions.changed:
            continue  # names added or removed are in the summary line above
        t.append("\n" + title + "\n", style="bold")
        for line in lines:
            t.append(clean(line) + "\n")
    return t


def item_line(e: ItemEffect, diff: LedgerDiff, du: DisplayUnits, width: int = 76) -> str:
    """One ranked row: kind, id, name, |ΔCG| this item alone, Δmass."""
    side = diff.b if e.kind == "added" else diff.a
    name = side.labels[side.ledger.index[e.id]]
    lu, mu = pretty_unit(du.length), pretty_unit(du.mass)
    shift = "ΔCG —" if not np.isfinite(e.shift) else f"ΔCG {du.num(e.shift, 'length')} {lu}"
    tail = f"  {shift}  Δm {signed(du.m(e.mass_delta))} {mu}"
    head = f"{e.kind:<8} {clean(e.id)}"
    room = width - len(tail) - len(head) - 2
    if room >= 4:
        label = clean(name)
        head += "  " + (label if len(label) <= room else label[: room - 1] + "…")
    elif len(head) > width - len(tail):
        head = head[: max(8, width - len(tail) - 1)] + "…"
    return head.ljust(width - len(tail)) + tail


def item_detail(e: ItemEffect, diff: LedgerDiff, du: DisplayUnits) -> Text:
    """What changed in one item, old → new in display units, and how far it alone moved A's CG."""
    t = Text()
    lu, mu = pretty_unit(du.length), pretty_unit(du.mass)
    side = diff.b if e.kind == "added" else diff.a
    i = side.ledger.index[e.id]
    t.append(clean(e.id), style="bold")
    t.append(f" ({clean(side.labels[i])}) — {e.kind}")
    t.append(" (only in B)" if e.kind == "added" else " (only in A)" if e.kind == "removed" else "")
    t.append("\n")
    if e.kind in ("added", "removed"):
        t.append(f"  mass {du.num(side.row_mass[i], 'mass')} {mu}, CG "
                 + ", ".join(f"{AXIS_NAMES[k]} {du.num(side.cg[i, k], 'length')}" for k in range(3)) + f" {lu}\n")
    else:
        change = next(c for c in diff.changed if c.id == e.id)
        for name, (old, new) in change.fields.items():
            for label, a_text, b_text in change_rows(name, old, new, du):
                t.append(f"  {clean(label)}: {clean(a_text)} → {clean(b_text)}\n")
    if np.isfinite(e.shift):
        t.append("  alone it moves A's CG " + ", ".join(f"{AXIS_NAMES[k]} {signed(du.l(e.cg_shift[k]))}"
                                                       for k in range(3)) + f" {lu}")
    else:
        t.append("  its CG shift is undefined (a side with no mass)")
    return t
