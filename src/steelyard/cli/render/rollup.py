"""Human-readable roll-up: rich tables on stdout."""

from __future__ import annotations

import numpy as np
from rich import box
from rich.console import Console
from rich.table import Table
from rich.text import Text

from steelyard.core.caution import CAUTION
from steelyard.core.errors import SteelyardError
from steelyard.core.physics.inertia import radius_of_gyration
from steelyard.core.physics.rollup import check_finite_rollup
from steelyard.core.display import AXIS_NAMES, DisplayUnits, fmt, fmt_sig, pretty_unit, visible
from steelyard.core.physics.groups import subtotals
from steelyard.core.limits.rules import mac_reference
from steelyard.core.document.model import OPPOSITE
from steelyard.core.limits.status import envelope_results


def _axis_label(frame, k: int, length_unit: str) -> str:
    return f"{AXIS_NAMES[k]} (+{frame.direction(k)}) [{pretty_unit(length_unit)}]"


def print_rollup(loaded, state, mp, system: str | None, console: Console | None = None) -> None:
    console = console or Console(highlight=False, markup=False)
    ledger = loaded.ledger
    mac = mac_reference(ledger)  # read before printing: a bad [mac] is one error line, not half a report
    try:
        check_finite_rollup(mp, ledger.items)  # figures beyond a float: one error line, not half a report
    except SteelyardError as exc:
        raise exc.located(file=loaded.path)
    du = DisplayUnits.choose(ledger.units, system)
    mu, lu, iu = pretty_unit(du.mass), pretty_unit(du.length), pretty_unit(du.inertia)
    dl, dm, dmo = du.decimals("length"), du.decimals("mass"), du.decimals("moment")
    title = visible(f"Roll-up of {loaded.path} — loadout: {state.name or '(none: variable items empty)'}")
    console.print(Text(title, style="bold"))

    t = Table(title="Totals", title_justify="left", show_header=True)
    t.add_column("quantity")
    t.add_column("value", justify="right")
    t.add_row(f"mass [{mu}]", fmt(du.m(mp.mass), dm))
    for k in range(3):
        t.add_row(f"CG {_axis_label(ledger.frame, k, du.length)}", fmt(du.l(mp.cg[k]), dl + 1))
        if k == 0 and mac is not None and np.isfinite(mp.cg[0]):
            t.add_row("CG x [%MAC]", fmt(float(mac.percent(mp.cg[0])), 2))
    console.print(t)

    it = Table(title=f"Inertia about the CG [{iu}] (tensor; off-diagonals are minus the products)",
               title_justify="left")
    it.add_column("")
    for a in AXIS_NAMES:
        it.add_column(a, justify="right")
    for r, a in enumerate(AXIS_NAMES):
        it.add_row(a, *(fmt_sig(du.i(mp.inertia_cg[r, c])) for c in range(3)))
    console.print(it)
    p = mp.inertia_cg
    console.print(Text(f"Products of inertia ∫xy dm, ∫xz dm, ∫yz dm [{iu}]: "
                       f"{fmt_sig(du.i(-p[0, 1]))}, {fmt_sig(du.i(-p[0, 2]))}, {fmt_sig(du.i(-p[1, 2]))}"))
    if mp.mass > 0:
        moments, axes = mp.principal
        pt = Table(title=f"Principal moments [{iu}] and axes (unit vectors in body axes)", title_justify="left")
        for col in ("moment", "x", "y", "z", f"radius of gyration [{lu}]"):
            pt.add_column(col, justify="right")
        for k in range(3):
            rg = radius_of_gyration(max(moments[k], 0.0), mp.mass)
            pt.add_row(fmt_sig(du.i(moments[k])), *(f"{v:+.5f}" for v in axes[k]), fmt(du.l(rg), dl))
        console.print(pt)

    groups = [g for g in ledger.items]
    st = subtotals([g.group for g in groups], state.mass, state.cg, state.own)
    if st:
        ws = Table(title="Weight statement by group", title_justify="left", box=box.SIMPLE_HEAD, pad_edge=False)
        wide = console.width >= 100  # item count and share only where they fit
        heads = (*(("items",) if wide else ()), f"mass [{mu}]", *(("%",) if wide else ()),
                 *(f"{a} [{lu}]" for a in AXIS_NAMES), f"moment [{pretty_unit(du.moment)}]")
        widths = [max(len(h), 7) for h in heads]
        room = console.width - sum(widths) - 3 * len(heads) - 4  # padding and separators
        ws.add_column("group", no_wrap=True, width=max(8, min(30, room)), overflow="ellipsis")
        for head, w in zip(heads, widths):
            ws.add_column(head, justify="right", no_wrap=True, min_width=w)
        for g in st:
            label = visible("  " * g.depth + g.path.rsplit("/", 1)[-1])
            share = 100.0 * g.mass / mp.mass if mp.mass > 0 else float("nan")
            ws.add_row(Text(label), *((str(g.count),) if wide else ()), fmt(du.m(g.mass), dm),
                       *((fmt(share, 1),) if wide else ()), *(fmt(du.l(g.cg[k]), dl) for k in range(3)),
                       fmt(du.mom(g.mass * g.cg[0]) if g.mass else 0.0, dmo))
        ws.add_row(Text("total", style="bold"), *((str(len(groups)),) if wide else ()), fmt(du.m(mp.mass), dm),
                   *((fmt(100.0, 1),) if wide else ()), *(fmt(du.l(mp.cg[k]), dl) for k in range(3)),
                   fmt(du.mom(mp.mass * mp.cg[0]), dmo))
        console.print(ws)

    from steelyard.cli.render.rollup_limits import print_limits, scoped_out, state_check  # scoped as check

    checked = state_check(ledger, state.name, mp)
    results = envelope_results(ledger, mp)
    if results:
        axes = sorted({r.axis for r in results})
        if len(axes) == 1:  # name the sides as the frame does: fwd / aft on an x axis pointing aft
            hi_word = ledger.frame.direction("xyz".index(axes[0]))
            lo_word, how = OPPOSITE[hi_word], ""
        else:
            lo_word, hi_word = "low", "high"
            how = ", low / high: " + ", ".join(
                f"{a} {OPPOSITE[ledger.frame.direction(k)]}/{ledger.frame.direction(k)}"
                for k, a in enumerate("xyz") if a in axes)
        et = Table(title=f"CG envelopes (margin to each limit{how})", title_justify="left", box=box.SIMPLE_HEAD,
                   pad_edge=False)
        # the CG itself is in the totals above; here: the allowed range and the room on each side
        heads = ("status", f"allowed [{lu}]", f"{lo_word} [{lu}]", f"{hi_word} [{lu}]", f"+mass [{mu}]")
        widths = [7, max(len(heads[1]), 2 * dl + 9), max(len(heads[2]), 6), max(len(heads[3]), 6),
                  max(len(heads[4]), 7)]
        room = console.width - sum(widths) - 3 * (len(heads) + 1) + 1  # padding and separators
        et.add_column("envelope", no_wrap=True, width=max(8, min(24, room)), overflow="ellipsis")
        for head, w in zip(heads, widths):
            et.add_column(head, justify="left" if head == "status" else "right", no_wrap=True, min_width=w)
        for r in results:
            allowed = "off range" if r.limits is None else f"{fmt(du.l(r.lo), dl)}…{fmt(du.l(r.hi), dl)}"
            status = "n/a" if r.name in scoped_out(checked) else "INSIDE" if r.inside else "OUTSIDE"
            name = r.name if len(axes) == 1 else f"{r.name} ({r.axis})"
            et.add_row(Text(visible(name)), status, allowed,
                       fmt(None if r.margin_lo is None else du.l(r.margin_lo), dl),
                       fmt(None if r.margin_hi is None else du.l(r.margin_hi), dl),
                       fmt(None if r.mass_margin is None else du.m(r.mass_margin), dm))
        console.print(et)
    print_limits(console, ledger, checked, du, caution=False)
    if results or ledger.limits:
        console.print(Text(CAUTION, style="italic"))

    from steelyard.cli.render.control import print_control  # basic vs predicted, allocations, uncertainty

    print_control(console, ledger, state, du)
