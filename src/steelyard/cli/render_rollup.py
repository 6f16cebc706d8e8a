"""Human-readable roll-up: rich tables on stdout."""

from __future__ import annotations

import numpy as np
from rich.console import Console
from rich.table import Table
from rich.text import Text

from ..core.caution import CAUTION
from ..core.display import AXIS_NAMES, DisplayUnits, fmt, pretty_unit
from ..core.groups import subtotals
from ..core.status import envelope_results


def _axis_label(frame, k: int, length_unit: str) -> str:
    return f"{AXIS_NAMES[k]} (+{frame.direction(k)}) [{pretty_unit(length_unit)}]"


def print_rollup(loaded, state, mp, system: str | None, console: Console | None = None) -> None:
    console = console or Console(highlight=False, markup=False)
    ledger = loaded.ledger
    du = DisplayUnits.choose(ledger.units, system)
    mu, lu, iu = pretty_unit(du.mass), pretty_unit(du.length), pretty_unit(du.inertia)
    title = f"Roll-up of {loaded.path} — loadout: {state.name or '(none: variable items empty)'}"
    console.print(Text(title, style="bold"))

    t = Table(title="Totals", title_justify="left", show_header=True)
    t.add_column("quantity")
    t.add_column("value", justify="right")
    t.add_row(f"mass [{mu}]", fmt(du.m(mp.mass)))
    for k in range(3):
        t.add_row(f"CG {_axis_label(ledger.frame, k, du.length)}", fmt(du.l(mp.cg[k])))
    console.print(t)

    it = Table(title=f"Inertia about the CG [{iu}] (tensor; off-diagonals are minus the products)",
               title_justify="left")
    it.add_column("")
    for a in AXIS_NAMES:
        it.add_column(a, justify="right")
    for r, a in enumerate(AXIS_NAMES):
        it.add_row(a, *(fmt(du.i(mp.inertia_cg[r, c])) for c in range(3)))
    console.print(it)
    p = mp.inertia_cg
    console.print(Text(f"Products of inertia ∫xy dm, ∫xz dm, ∫yz dm [{iu}]: "
                       f"{fmt(du.i(-p[0, 1]))}, {fmt(du.i(-p[0, 2]))}, {fmt(du.i(-p[1, 2]))}"))
    if mp.mass > 0:
        moments, axes = mp.principal
        pt = Table(title=f"Principal moments [{iu}] and axes (unit vectors in body axes)", title_justify="left")
        for col in ("moment", "x", "y", "z", f"radius of gyration [{lu}]"):
            pt.add_column(col, justify="right")
        for k in range(3):
            rg = np.sqrt(max(moments[k], 0.0) / mp.mass)
            pt.add_row(fmt(du.i(moments[k])), *(f"{v:+.5f}" for v in axes[k]), fmt(du.l(rg)))
        console.print(pt)

    groups = [g for g in ledger.items]
    st = subtotals([g.group for g in groups], state.mass, state.cg, state.own)
    if st:
        ws = Table(title="Weight statement by group", title_justify="left")
        ws.add_column("group")
        ws.add_column("items", justify="right")
        ws.add_column(f"mass [{mu}]", justify="right")
        ws.add_column("% of total", justify="right")
        for k in range(3):
            ws.add_column(f"{AXIS_NAMES[k]} [{lu}]", justify="right")
        ws.add_column(f"moment x [{pretty_unit(du.moment)}]", justify="right")
        for g in st:
            label = "  " * g.depth + g.path.rsplit("/", 1)[-1]
            share = 100.0 * g.mass / mp.mass if mp.mass > 0 else float("nan")
            ws.add_row(Text(label), str(g.count), fmt(du.m(g.mass)), fmt(share, 1),
                       *(fmt(du.l(g.cg[k])) for k in range(3)), fmt(du.mom(g.mass * g.cg[0]) if g.mass else 0.0))
        ws.add_row(Text("total", style="bold"), str(len(groups)), fmt(du.m(mp.mass)), fmt(100.0, 1),
                   *(fmt(du.l(mp.cg[k])) for k in range(3)), fmt(du.mom(mp.mass * mp.cg[0])))
        console.print(ws)

    results = envelope_results(ledger, mp)
    if results:
        et = Table(title="CG envelopes", title_justify="left")
        for col in ("envelope", "axis", "status", f"CG [{lu}]", f"allowed [{lu}]", f"margin [{lu}]",
                    f"mass margin [{mu}]"):
            et.add_column(col, justify="left" if col in ("envelope", "axis", "status") else "right")
        for r in results:
            allowed = "outside mass range" if r.limits is None else f"{fmt(du.l(r.lo))} … {fmt(du.l(r.hi))}"
            status = "INSIDE" if r.inside else "OUTSIDE"
            et.add_row(Text(r.name), r.axis, status, fmt(du.l(r.cg)), allowed,
                       fmt(None if r.margin is None else du.l(r.margin)),
                       fmt(None if r.mass_margin is None else du.m(r.mass_margin)))
        console.print(et)
        console.print(Text(CAUTION, style="italic"))
