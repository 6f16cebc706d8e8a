"""What a set-up entry does to the checks, before it is applied: one line per loadout state.

The numbers are `check_ledger`'s (core.limits.checks), the same `steelyard
check` prints, on the ledger the form would make: a limit's value, bounds and
margin where it applies (and where it does not), an envelope's margin, an
allocation's predicted mass against it, %MAC, the zero-fuel mass. Shown in the
display units; nothing here decides anything.
"""

from __future__ import annotations

from rich.text import Text

from steelyard.core.display import DisplayUnits, pretty_unit
from steelyard.core.document.model import Ledger
from steelyard.core.errors import SteelyardError
from steelyard.core.limits.checks import check_ledger
from steelyard.tui.text import clean

_MAX_LINES = 4


def _scale(du: DisplayUnits, dimension: str):
    if dimension == "mass":
        return du.m, pretty_unit(du.mass)
    if dimension == "inertia":
        return du.i, pretty_unit(du.inertia)
    return du.l, pretty_unit(du.length)


def _finding_line(state: str, f, du: DisplayUnits) -> Text:
    t = Text(f"{clean(state)}: ", style="bold")
    if not f.applies:
        return t + Text("does not apply (scope)", style="dim")
    conv, unit = _scale(du, f.dimension)
    what = f"{f.axis} " if f.kind == "inertia" and f.axis else ""
    lo = None if f.lo is None else du.num(f.lo, f.dimension)
    hi = None if f.hi is None else du.num(f.hi, f.dimension)
    rng = f"{lo} to {hi}" if lo and hi else f"max {hi}" if hi else f"min {lo}" if lo else "no bound here"
    t.append(f"{what}{du.num(f.value, f.dimension) if f.value is not None else '—'} {unit} ({rng})")
    if f.margin is not None:
        t.append(f" margin {du.num(f.margin, f.dimension)} ")
    t.append("within" if f.ok else "BROKEN", style="bold" if f.ok else "bold red")
    return t


def effect_lines(kind: str, name: str | None, ledger: Ledger, loadout: str | None, du: DisplayUnits) -> Text:
    """The checks an entry takes part in, on `ledger` (the ledger the form would make)."""
    try:
        report = check_ledger(ledger, loadout if loadout in {lo.name for lo in ledger.loadouts} else None)
    except SteelyardError as exc:
        return Text(f"Cannot check: {clean(str(exc))}")
    lines: list[Text] = []
    mu = pretty_unit(du.mass)
    if kind in ("limit", "envelope"):
        for s in report.states:
            for f in s.findings:
                if f.name == name and (f.kind == "envelope") == (kind == "envelope"):
                    lines.append(_finding_line(s.name, f, du))
    elif kind in ("allocation", "growth"):
        for a in report.allocations:
            if kind == "growth" or a.group == name:
                ok = a.ok
                lines.append(Text(f"{clean(a.group or '(whole vehicle)')}: ", style="bold") + Text(
                    f"predicted {du.num(a.predicted, 'mass')} {mu} (basic {du.num(a.basic, 'mass')}) of "
                    f"{du.num(a.allocation, 'mass')} {mu}, margin {du.num(a.margin, 'mass')}  ") + Text(
                    "within" if ok else "OVER", style="bold" if ok else "bold red"))
        if not lines and kind == "growth":
            lines.append(Text("no [[allocation]] to compare the predicted mass with", style="dim"))
    elif kind == "mac":
        for s in report.states:
            if s.percent_mac is not None:
                lines.append(Text(f"{clean(s.name)}: ", style="bold") + Text(f"CG at {s.percent_mac:.1f} %MAC"))
    elif kind == "fuel":
        for s in report.states:
            if s.kind == "zero-fuel":
                lines.append(Text(f"{clean(s.name)}: ", style="bold") + Text(f"{du.num(s.mass, 'mass')} {mu}"))
    elif kind == "loadout":
        for s in report.states:
            if s.loadout == name:
                broken = [f.name for f in s.findings if f.applies and not f.ok]
                lines.append(Text(f"{clean(s.name)}: ", style="bold") + Text(
                    f"{du.num(s.mass, 'mass')} {mu}, ") + Text(
                    f"{len(broken)} broken: {clean(', '.join(broken))}" if broken else "every check within",
                    style="bold red" if broken else "bold"))
    if not lines:
        return Text("(no loadout state it takes part in)", style="dim")
    more = len(lines) - _MAX_LINES
    out = Text("\n").join(lines[:_MAX_LINES])
    if more > 0:
        out.append(f"\n… and {more} more (steelyard check lists all)", style="dim")
    return out
