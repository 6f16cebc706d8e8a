"""Human-readable roll-up: boxed tables on stdout.

Drawn by cli/render/plain.py (the characters rich draws, without importing
rich): a small roll-up starts in a fraction of the time, and a statement of a
thousand groups takes milliseconds. The control tables (growth, allocations,
uncertainty) are still rich's, imported only for a ledger that has them.
"""

from __future__ import annotations

from operator import attrgetter

import numpy as np

from steelyard.cli.render.plain import Out, Table
from steelyard.core.caution import CAUTION
from steelyard.core.errors import SteelyardError
from steelyard.core.physics.inertia import radius_of_gyration
from steelyard.core.physics.rollup import check_finite_rollup
from steelyard.core.display import AXIS_NAMES, DisplayUnits, pretty_unit, visible
from steelyard.core.numbers import cell, column, column_decimals, number
from steelyard.core.physics.groups import subtotals
from steelyard.core.limits.rules import mac_reference
from steelyard.core.document.model import OPPOSITE
from steelyard.core.limits.status import envelope_results


def _axis_label(frame, k: int, length_unit: str) -> str:
    return f"{AXIS_NAMES[k]} (+{frame.direction(k)}) [{pretty_unit(length_unit)}]"


def print_rollup(loaded, state, mp, system: str | None, out: Out | None = None) -> None:
    console = out or Out()
    ledger = loaded.ledger
    mac = mac_reference(ledger)  # read before printing: a bad [mac] is one error line, not half a report
    try:
        check_finite_rollup(mp, ledger)  # figures beyond a float: one error line, not half a report
    except SteelyardError as exc:
        raise exc.located(file=loaded.path)
    du = DisplayUnits.choose(ledger.units, system)
    mu, lu, iu = pretty_unit(du.mass), pretty_unit(du.length), pretty_unit(du.inertia)
    fm, fl, fi, fmo = du.factor("mass"), du.factor("length"), du.factor("inertia"), du.factor("moment")
    title = visible(f"Roll-up of {loaded.path} — loadout: {state.name or '(none: variable items empty)'}")
    console.line(title, "bold")

    t = Table(title="Totals")
    t.add_column("quantity")
    t.add_column("value", justify="right")
    t.add_row(f"mass [{mu}]", number(du.m(mp.mass), "mass", fm))
    cg = [du.l(c) for c in mp.cg]
    dcg = column_decimals(cg, "length", fl)  # one resolution for the three CG coordinates
    for k in range(3):
        t.add_row(f"CG {_axis_label(ledger.frame, k, du.length)}", cell(cg[k], dcg))
        if k == 0 and mac is not None and np.isfinite(mp.cg[0]):
            t.add_row("CG x [%MAC]", number(float(mac.percent(mp.cg[0])), "percent_mac"))
    console.table(t)

    it = Table(title=f"Inertia about the CG [{iu}] (tensor; off-diagonals are minus the products)")
    it.add_column("")
    for a in AXIS_NAMES:
        it.add_column(a, justify="right")
    tensor = [du.i(float(v)) for v in np.ravel(mp.inertia_cg)]
    di = column_decimals(tensor, "inertia", fi)  # one count of decimals for the whole tensor
    for r, a in enumerate(AXIS_NAMES):
        it.add_row(a, *(cell(tensor[3 * r + c], di) for c in range(3)))
    console.table(it)
    p = mp.inertia_cg
    console.line(f"Products of inertia ∫xy dm, ∫xz dm, ∫yz dm [{iu}]: " + ", ".join(
        number(du.i(-p[a, b]), "inertia", fi) for a, b in ((0, 1), (0, 2), (1, 2))))
    if mp.mass > 0:
        moments, axes = mp.principal
        pt = Table(title=f"Principal moments [{iu}] and axes (unit vectors in body axes)")
        for col in ("moment", "x", "y", "z", f"radius of gyration [{lu}]"):
            pt.add_column(col, justify="right")
        shown = column([du.i(float(v)) for v in moments], "inertia", fi)
        rgs = column([du.l(radius_of_gyration(max(v, 0.0), mp.mass)) for v in moments], "length", fl)
        for k in range(3):
            pt.add_row(shown[k], *column([float(v) for v in axes[k]], "fraction"), rgs[k])
        console.table(pt)

    groups = ledger.items
    st = subtotals(list(map(attrgetter("group"), groups)), state.mass, state.cg, state.own_sparse())
    if st:
        ws = Table(title="Weight statement by group", box="simple_head", pad_edge=False)
        wide = console.width >= 100  # item count and share only where they fit
        heads = (*(("items",) if wide else ()), f"mass [{mu}]", *(("%",) if wide else ()),
                 *(f"{a} [{lu}]" for a in AXIS_NAMES), f"moment [{pretty_unit(du.moment)}]")
        # each column one count of decimals, the total row included; x, y, z at one resolution
        # whole columns at once: the same IEEE divisions as du.m, du.l and du.mom value by value
        gm = np.array([g.mass for g in st] + [mp.mass])
        gc = np.array([g.cg for g in st] + [mp.cg], dtype=float)
        masses = (gm / fm).tolist()
        cgs = [(gc[:, k] / fl).tolist() for k in range(3)]
        with np.errstate(invalid="ignore"):  # a group without mass has no CG: its moment shows 0
            moms = np.where(gm != 0, gm * gc[:, 0] / fmo, 0.0)
        moms[-1] = du.mom(mp.mass * mp.cg[0])  # the total row as before, whatever its mass
        moms = moms.tolist()
        dcg = column_decimals([v for c in cgs for v in c], "length", fl)
        cols = [column(masses, "mass", fm), *(column(c, "length", fl, dcg) for c in cgs),
                column(moms, "moment", fmo)]
        if wide:
            shares = [100.0 * g.mass / mp.mass if mp.mass > 0 else None for g in st] + [100.0]
            cols.insert(1, column(shares, "percent"))
            cols.insert(0, [str(g.count) for g in st] + [str(len(groups))])
        widths = [max(len(h), 7, max(map(len, c))) for h, c in zip(heads, cols)]
        room = console.width - sum(widths) - 3 * len(heads) - 4  # padding and separators
        ws.add_column("group", no_wrap=True, width=max(8, min(30, room)))
        for head, w in zip(heads, widths):
            ws.add_column(head, justify="right", no_wrap=True, min_width=w)
        rows = list(zip(*cols))
        for g, row in zip(st, rows):
            ws.add_row(visible("  " * g.depth + g.path.rsplit("/", 1)[-1]), *row)
        ws.add_row(("total", "bold"), *rows[-1])
        console.table(ws)

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
        et = Table(title=f"CG envelopes (margin to each limit{how})", box="simple_head", pad_edge=False)
        # the CG itself is in the totals above; here: the allowed range and the room on each side
        heads = ("status", f"allowed [{lu}]", f"{lo_word} [{lu}]", f"{hi_word} [{lu}]", f"+mass [{mu}]")
        lengths = [du.l(v) for r in results for v in (r.lo, r.hi, r.margin_lo, r.margin_hi) if v is not None]
        de = column_decimals(lengths, "length", fl)  # the envelopes' lengths share one resolution
        dmm = column_decimals([du.m(r.mass_margin) for r in results if r.mass_margin is not None], "mass", fm)
        widths = [7, max(len(heads[1]), 2 * de + 9), max(len(heads[2]), 6), max(len(heads[3]), 6),
                  max(len(heads[4]), 7)]
        room = console.width - sum(widths) - 3 * (len(heads) + 1) + 1  # padding and separators
        et.add_column("envelope", no_wrap=True, width=max(8, min(24, room)))
        for head, w in zip(heads, widths):
            et.add_column(head, justify="left" if head == "status" else "right", no_wrap=True, min_width=w)
        for r in results:
            allowed = "off range" if r.limits is None else f"{cell(du.l(r.lo), de)}…{cell(du.l(r.hi), de)}"
            status = "n/a" if r.name in scoped_out(checked) else "INSIDE" if r.inside else "OUTSIDE"
            name = r.name if len(axes) == 1 else f"{r.name} ({r.axis})"
            et.add_row(visible(name), status, allowed,
                       cell(None if r.margin_lo is None else du.l(r.margin_lo), de),
                       cell(None if r.margin_hi is None else du.l(r.margin_hi), de),
                       cell(None if r.mass_margin is None else du.m(r.mass_margin), dmm))
        console.table(et)
    print_limits(console, ledger, checked, du, caution=False)
    if results or ledger.limits:
        console.line(CAUTION, "italic")

    from steelyard.io.report.control import control_record  # basic vs predicted, allocations, uncertainty

    record = control_record(ledger, state)
    if record:
        from steelyard.cli.render.control import print_control

        console.stream.flush()
        print_control(console.console(), ledger, state, du, record=record)
