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
from steelyard.core.display import AXIS_NAMES, DisplayUnits, pretty_unit
from steelyard.core.numbers import column, number
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
    t.append(du.mass_text(mp.mass) + "\n\n")
    t.append(f"CG (from the datum) [{lu}]\n", style="bold")
    cg = column([du.l(c) for c in mp.cg], "length", du.factor("length"))  # one resolution for x, y, z
    for k in range(3):
        t.append(f"  {axis_label(ledger.frame, k):<28} {cg[k]:>14}\n")
    try:
        ref = mac_reference(ledger)
    except SteelyardError as exc:
        t.append("  %MAC: " + clean(exc) + "\n")
        ref = None
    if ref is not None and np.isfinite(mp.cg[0]):
        t.append(f"  {'x in %MAC':<28} {number(float(ref.percent(mp.cg[0])), 'percent_mac'):>14} %")
        t.append(f"  LEMAC {du.num(ref.lemac, 'length')}, MAC {du.num(ref.length, 'length')} {lu}\n", style="dim")
    t.append(f"\nInertia about the CG [{iu}] (tensor; off-diagonals are minus the products)\n", style="bold")
    t.append("     " + "".join(f"{a:>17}" for a in AXIS_NAMES) + "\n")
    tensor = column([du.i(float(v)) for v in np.ravel(mp.inertia_cg)], "inertia", du.factor("inertia"))
    for r, a in enumerate(AXIS_NAMES):
        t.append(f"  {a}  " + "".join(f"{tensor[3 * r + c]:>17}" for c in range(3)) + "\n")
    p = mp.inertia_cg
    t.append(f"\nProducts of inertia about the CG [{iu}]\n", style="bold")
    t.append(f"  ∫xy dm {du.num(-p[0, 1], 'inertia')}   ∫xz dm {du.num(-p[0, 2], 'inertia')}   "
             f"∫yz dm {du.num(-p[1, 2], 'inertia')}\n")
    if mp.mass > 0:
        moments, axes = mp.principal
        t.append(f"\nPrincipal moments [{iu}], axes (body), radius of gyration k [{lu}]\n", style="bold")
        shown = column([du.i(float(v)) for v in moments], "inertia", du.factor("inertia"))
        # radius of gyration: float() first, no overflow warning
        rgs = column([du.l(radius_of_gyration(max(float(v), 0.0), float(mp.mass))) for v in moments], "length",
                     du.factor("length"))
        for k in range(3):
            parts = column([float(v) for v in axes[k]], "fraction")  # never "-0.00000"
            t.append(f"  I{k + 1} {shown[k]:>16}  axis (" + ", ".join(f"{v:>8}" for v in parts)
                     + f")  k {rgs[k]}\n")
    t.append("\nFrame: right-handed, origin at the datum; products of inertia are ∫xy dm about the CG.",
             style="dim")
    return t


class TotalsPanel(VerticalScroll):
    def compose(self):
        yield Static("", id="totals-text")

    def show(self, totals: Totals, ledger: Ledger, du: DisplayUnits, system: str | None) -> None:
        self.query_one("#totals-text", Static).update(totals_text(totals, ledger, du, system))
