"""The totals view: mass, CG with axis directions, %MAC ([mac]), inertia, principal axes.

Every number is from core's roll-up; this module only lays them out in the
chosen display units and says which way each axis points.
"""

from __future__ import annotations

import numpy as np
from rich.text import Text
from textual.containers import VerticalScroll
from textual.widgets import Static

from steelyard.core.physics.inertia import radius_of_gyration
from steelyard.core.display import AXIS_NAMES, DisplayUnits, fmt, pretty_unit
from steelyard.core.errors import SteelyardError
from steelyard.core.limits.rules import MacRef
from steelyard.core.limits.rules import mac_reference as core_mac_reference
from steelyard.core.document.model import Ledger
from steelyard.tui.state.session import Totals
from steelyard.tui.state.shown import axis_label, unit_label
from steelyard.tui.text import clean


def mac_reference(ledger: Ledger) -> MacRef | None:
    """The ledger's `[mac]` (LEMAC and MAC length, SI; docs/limits.md), or None when it has none.

    Raises SteelyardError for a `[mac]` table that cannot be read.
    """
    return core_mac_reference(ledger)


def totals_text(totals: Totals, ledger: Ledger, du: DisplayUnits, system: str | None) -> Text:
    t = Text()
    mu, lu, iu = pretty_unit(du.mass), pretty_unit(du.length), pretty_unit(du.inertia)
    lo = "none (variable items empty)" if totals.loadout is None else clean(totals.loadout)
    t.append("Loadout: ", style="bold")
    t.append(f"{lo}    ")
    t.append("Units: ", style="bold")
    t.append(unit_label(du, system) + "\n\n")
    if totals.error is not None:
        t.append("This loadout cannot be applied: " + clean(totals.error))
        return t
    mp = totals.mp
    t.append("Mass ", style="bold")
    t.append(f"{fmt(du.m(mp.mass))} {mu}\n\n")
    t.append(f"CG (from the datum) [{lu}]\n", style="bold")
    for k in range(3):
        t.append(f"  {axis_label(ledger.frame, k):<28} {fmt(du.l(mp.cg[k])):>14}\n")
    try:
        ref = mac_reference(ledger)
    except SteelyardError as exc:
        t.append("  %MAC: " + clean(exc) + "\n")
        ref = None
    if ref is not None and np.isfinite(mp.cg[0]):
        t.append(f"  {'x in %MAC':<28} {fmt(float(ref.percent(mp.cg[0])), 2):>14} %")
        t.append(f"  LEMAC {fmt(du.l(ref.lemac), 2)}, MAC {fmt(du.l(ref.length), 2)} {lu}\n", style="dim")
    t.append(f"\nInertia about the CG [{iu}] (tensor; off-diagonals are minus the products)\n", style="bold")
    t.append("     " + "".join(f"{a:>17}" for a in AXIS_NAMES) + "\n")
    for r, a in enumerate(AXIS_NAMES):
        t.append(f"  {a}  " + "".join(f"{fmt(du.i(mp.inertia_cg[r, c])):>17}" for c in range(3)) + "\n")
    p = mp.inertia_cg
    t.append(f"\nProducts of inertia about the CG [{iu}]\n", style="bold")
    t.append(f"  ∫xy dm {fmt(du.i(-p[0, 1]))}   ∫xz dm {fmt(du.i(-p[0, 2]))}   ∫yz dm {fmt(du.i(-p[1, 2]))}\n")
    if mp.mass > 0:
        moments, axes = mp.principal
        t.append(f"\nPrincipal moments [{iu}], axes (body), radius of gyration k [{lu}]\n", style="bold")
        for k in range(3):
            rg = radius_of_gyration(max(float(moments[k]), 0.0), float(mp.mass))  # no overflow warning
            t.append(f"  I{k + 1} {fmt(du.i(moments[k])):>16}  axis ("
                     + ", ".join(f"{v:+.4f}" for v in axes[k]) + f")  k {fmt(du.l(rg))}\n")
    t.append("\nFrame: right-handed, origin at the datum; products of inertia are ∫xy dm about the CG.",
             style="dim")
    return t


class TotalsPanel(VerticalScroll):
    def compose(self):
        yield Static("", id="totals-text")

    def show(self, totals: Totals, ledger: Ledger, du: DisplayUnits, system: str | None) -> None:
        self.query_one("#totals-text", Static).update(totals_text(totals, ledger, du, system))
