"""`steelyard check` output: tables on stdout, or one JSON record (SI)."""

from __future__ import annotations

import math

from rich import box
from rich.console import Console
from rich.table import Table
from rich.text import Text

from steelyard.core.caution import CAUTION
from steelyard.core.limits.checks import AllocationCheck, CheckReport, Finding
from steelyard.core.display import DisplayUnits, pretty_unit, visible
from steelyard.core.numbers import cell, number
from steelyard.core.document.model import OPPOSITE, Frame

_SI_UNIT = {"length": "m", "mass": "kg", "inertia": "kg*m**2"}
def T(text: object, style: str = "") -> Text:  # noqa: N802 - reads like the Text it makes
    return Text(visible(text), style=style)


def side_words(frame: Frame, axis: str) -> tuple[str, str]:
    """Names of the low and high side on an axis: ('fwd', 'aft') when +x points aft."""
    hi = frame.direction("xyz".index(axis))
    return OPPOSITE[hi], hi


# --------------------------------------------------------------------------- JSON


def _n(x) -> float | None:
    return None if x is None or not math.isfinite(x) else float(x)


def _finding_record(f: Finding, report: CheckReport, path: bool) -> dict:
    rec = {"kind": f.kind, "name": f.name, "applies": f.applies, "ok": f.ok, "unit": _SI_UNIT[f.dimension],
           "axis": f.axis, "value": _n(f.value), "limits": None if f.lo is None and f.hi is None else
           [_n(f.lo), _n(f.hi)], "margin": _n(f.margin), "margin_lo": _n(f.margin_lo),
           "margin_hi": _n(f.margin_hi)}
    if f.kind == "envelope":
        rec["mass_margin_kg"] = _n(f.mass_margin)
        rec["note"] = f.note or None
        mac = report.mac
        if mac is not None and f.axis == "x" and f.applies:
            rec["margin_lo_percent_mac"] = None if f.margin_lo is None else 100 * f.margin_lo / mac.length
            rec["margin_hi_percent_mac"] = None if f.margin_hi is None else 100 * f.margin_hi / mac.length
    if path:
        rec.update(state=f.state, step=f.step, first_broken_step=f.first_broken_step,
                   last_broken_step=f.last_broken_step, broken_states=f.broken_states)
    return rec


def _allocation_record(a: AllocationCheck) -> dict:
    return {"group": a.group, "allocation_kg": _n(a.allocation), "predicted_kg": _n(a.predicted),
            "margin_kg": _n(a.margin), "ok": a.ok, "basic_kg": _n(a.basic), "loadout": a.loadout}


def check_record(report: CheckReport, path: str) -> dict:
    n, broken = report.counts
    mac = report.mac
    return {
        "file": path,
        "ok": report.ok,
        "checks": n,
        "broken": broken,
        "mac": None if mac is None else {"lemac_m": mac.lemac, "length_m": mac.length},
        "states": [
            {"name": s.name, "loadout": s.loadout, "kind": s.kind, "condition": s.condition, "ok": s.ok,
             "mass_kg": _n(s.mass), "cg_m": [_n(c) for c in s.cg], "cg_percent_mac": _n(s.percent_mac),
             "findings": [_finding_record(f, report, False) for f in s.findings]}
            for s in report.states],
        "sequences": [
            {"name": q.name, "loadout": q.loadout, "ok": q.ok, "states": len(q.path),
             "steps": [{"index": st.index, "kind": st.kind, "label": st.label, "items": list(st.items),
                        "first_state": st.first, "last_state": st.last} for st in q.steps],
             "findings": [_finding_record(f, report, True) for f in q.findings]}
            for q in report.sequences],
        "allocations": [_allocation_record(a) for a in report.allocations],
        "caution": CAUTION,
    }


# --------------------------------------------------------------------------- text


class _Fmt:
    """Numbers in display units, with their unit."""

    def __init__(self, du: DisplayUnits, masses=(), lengths=()):
        """One count of decimals per dimension for the whole printout (docs/numbers.md): the
        resolution of 5 significant figures at the largest mass and CG checked."""
        self.du = du
        self.dm = du.column_decimals(masses, "mass") if len(masses) else du.decimals("mass")
        self.dl = du.column_decimals(lengths, "length")

    def conv(self, dimension: str, x: float) -> float:
        return {"length": self.du.l, "mass": self.du.m, "inertia": self.du.i}[dimension](x)

    def num(self, dimension: str, x: float | None) -> str:
        if x is None:
            return "—"
        v = self.conv(dimension, x)
        if dimension == "inertia":
            return number(v, "inertia", self.du.factor("inertia"))
        return cell(v, self.dl if dimension == "length" else self.dm)

    def unit(self, dimension: str) -> str:
        return pretty_unit({"length": self.du.length, "mass": self.du.mass, "inertia": self.du.inertia}[dimension])

    def qty(self, dimension: str, x: float | None) -> str:
        return "—" if x is None else f"{self.num(dimension, x)} {self.unit(dimension)}"


def _status(f: Finding) -> str:
    if f.kind == "envelope":
        return "inside" if f.ok else "OUTSIDE"
    return "ok" if f.ok else "BROKEN"


def _pct(x: float | None, mac) -> str:
    return "" if x is None or mac is None else f"{100 * x / mac.length:.2f} %"


def _table(title: str) -> Table:
    return Table(title=title, title_justify="left", box=box.SIMPLE_HEAD, pad_edge=False)


def _name_col(t: Table, head: str, width: int) -> None:
    t.add_column(head, overflow="ellipsis", no_wrap=True, max_width=width)


def _num_col(t: Table, head: str, left: bool = False) -> None:
    t.add_column(head, justify="left" if left else "right", no_wrap=True, min_width=len(head))


def _add_rows(t: Table, *cells) -> None:
    """One table row; a cell given as a tuple of lines continues on rows of its own below.

    A line break inside a cell would reach the terminal as a control picture
    (or break a column): every line gets its own row, other cells left blank.
    """
    lines = [c if isinstance(c, tuple) else (c,) for c in cells]
    for k in range(max(len(c) for c in lines)):
        t.add_row(*(c[k] if k < len(c) else "" for c in lines))


def _state_label(s) -> Text:
    return T("  zero fuel" if s.kind == "zero-fuel" else s.name)


def _scope_words(scope) -> str:
    by: dict[str, list[str]] = {}
    for kind, name in sorted(scope):
        by.setdefault(kind + "s", []).append(name)
    return "; ".join(f"{k} {', '.join(v)}" for k, v in by.items())


def _loadout_table(report: CheckReport, nf: _Fmt) -> Table:
    lu, mu = nf.unit("length"), nf.unit("mass")
    t = _table("Loadouts (and their zero-fuel states)")
    _name_col(t, "loadout", 22)
    _num_col(t, "condition", left=True)
    for head in (f"mass [{mu}]", f"CG x [{lu}]", *(("%MAC",) if report.mac else ()), "y", "z"):
        _num_col(t, head)
    for s in report.states:
        pm = (("—" if s.percent_mac is None else f"{s.percent_mac:.2f}"),) if report.mac else ()
        t.add_row(_state_label(s), "" if s.kind == "zero-fuel" else s.condition, nf.num("mass", s.mass),
                  nf.num("length", s.cg[0]), *pm, nf.num("length", s.cg[1]), nf.num("length", s.cg[2]))
    return t


def _envelope_table(report: CheckReport, frame: Frame, nf: _Fmt) -> Table | None:
    rows = [(s, f) for s in report.states for f in s.findings if f.kind == "envelope" and f.applies]
    if not rows:
        return None
    mac = report.mac
    lu, mu = nf.unit("length"), nf.unit("mass")
    axes = sorted({f.axis for _, f in rows})
    one = len(axes) == 1
    low, high = side_words(frame, axes[0]) if one else ("low", "high")
    how = "" if one else " (low / high: " + ", ".join(f"{a} {'/'.join(side_words(frame, a))}" for a in axes) + ")"
    t = _table(f"CG envelopes: margins to each limit{how}" + ("; %MAC below" if mac else ""))
    _name_col(t, "loadout", 22)
    _name_col(t, "envelope", 16)
    _num_col(t, "status", left=True)
    for head in (f"{low} [{lu}]", f"{high} [{lu}]", f"+mass [{mu}]"):
        _num_col(t, head)
    for s, f in rows:
        lo, hi = (nf.num("length", f.margin_lo),), (nf.num("length", f.margin_hi),)
        if mac is not None and f.axis == "x":
            lo += (_pct(f.margin_lo, mac),)
            hi += (_pct(f.margin_hi, mac),)
        status = (_status(f),) + ((f.note,) if f.note else ())
        name = f.name if one else f"{f.name} ({f.axis})"
        _add_rows(t, _state_label(s), T(name), status, lo, hi, nf.num("mass", f.mass_margin))
    return t


def _allowed(f: Finding, nf: _Fmt) -> str:
    if f.lo is not None and f.hi is not None:
        return f"{nf.num(f.dimension, f.lo)}…{nf.num(f.dimension, f.hi)}"
    if f.hi is not None:
        return f"≤ {nf.num(f.dimension, f.hi)}"
    return "—" if f.lo is None else f"≥ {nf.num(f.dimension, f.lo)}"


def _limit_name(f: Finding) -> str:
    if f.kind == "inertia":
        return f"{f.name} {'I' if f.axis in ('xx', 'yy', 'zz') else 'P'}{f.axis}"
    return f.name


_LIMIT_TITLES = {"mass": "Mass limits", "length": "CG offset limits (distance of the CG from a line along a body axis)",
                 "inertia": "Inertia limits (about the CG; I: moment, P: product of inertia ∫xy dm)"}


def _limit_tables(report: CheckReport, nf: _Fmt) -> list[Table]:
    out = []
    for dim in ("mass", "length", "inertia"):
        rows = [(s, f) for s in report.states for f in s.findings
                if f.kind != "envelope" and f.applies and f.dimension == dim]
        if not rows:
            continue
        t = _table(f"{_LIMIT_TITLES[dim]} [{nf.unit(dim)}]")
        _name_col(t, "loadout", 22)
        _name_col(t, "limit", 26)
        _num_col(t, "status", left=True)
        for head in ("value", "allowed", "margin"):
            _num_col(t, head)
        for s, f in rows:
            t.add_row(_state_label(s), T(_limit_name(f)), _status(f), nf.num(dim, f.value), _allowed(f, nf),
                      nf.num(dim, f.margin))
        out.append(t)
    return out


def _where(q, f: Finding) -> str:
    if f.state is None:
        return ""
    if f.step == 0:
        return "start"
    step = q.steps[f.step - 1]
    done = 100 * float(q.path.progress[f.state])
    return f"step {f.step}, {step.label}" + ("" if done >= 100 else f", {done:.0f} % through")


def _sequence_table(report: CheckReport, frame: Frame, nf: _Fmt) -> Table | None:
    rows = [(q, f) for q in report.sequences for f in q.findings if f.applies]
    if not rows:
        return None
    t = _table("Sequences: the state with the least margin")
    _name_col(t, "sequence", 18)
    _name_col(t, "limit", 16)
    _num_col(t, "status", left=True)
    _num_col(t, "least margin")
    t.add_column("where", overflow="fold", ratio=1)
    for q, f in rows:
        margin = (nf.qty(f.dimension, f.margin),)
        if f.kind == "envelope" and f.margin is not None and f.margin_lo is not None:
            lo_w, hi_w = side_words(frame, f.axis)
            margin = (f"{lo_w if f.margin_lo <= f.margin_hi else hi_w} {margin[0]}",)
            if report.mac is not None and f.axis == "x":
                margin += (f"{_pct(f.margin, report.mac)}MAC",)
        elif f.kind == "envelope" and f.note:
            margin = (f"mass {f.note}",)
        where = (T(_where(q, f)),)
        if not f.ok and f.first_broken_step is not None:
            a, b = f.first_broken_step, f.last_broken_step
            span = f"broken in step {a}" if a == b else f"broken in steps {a} to {b}"
            where += (T(f"{span} ({f.broken_states} states)"),)
        _add_rows(t, T(q.name), T(_limit_name(f) if f.kind != "envelope" else f.name), _status(f), margin, where)
    return t


def _allocation_table(report: CheckReport, nf: _Fmt) -> Table | None:
    if not report.allocations:
        return None
    mu = nf.unit("mass")
    t = _table(f"Mass allocations: predicted mass (basic + growth allowance) against the not-to-exceed [{mu}]")
    _name_col(t, "group", 24)
    _num_col(t, "status", left=True)
    for head in ("allocation", "basic", "predicted", "margin"):
        _num_col(t, head)
    _name_col(t, "at loadout", 22)
    for a in report.allocations:
        t.add_row(T(a.group or "(whole vehicle)"), "ok" if a.ok else "BROKEN", nf.num("mass", a.allocation),
                  nf.num("mass", a.basic), nf.num("mass", a.predicted), nf.num("mass", a.margin),
                  T("(no loadout)" if a.loadout is None else a.loadout))
    return t


def _broken_names(report: CheckReport) -> list[str]:
    out = [f"{s.name}: {f.name}" for s in (*report.states, *report.sequences) for f in s.findings
           if f.applies and not f.ok]
    return out + [f"allocation {a.group or '(whole vehicle)'}" for a in report.allocations if not a.ok]


def _scope_line(report: CheckReport, ledger) -> str:
    from steelyard.core.limits.rules import envelope_specs, limit_specs

    used = {f.name for s in (*report.states, *report.sequences) for f in s.findings if not f.applies}
    scoped = [f"{x.name} ({_scope_words(x.applies_to)})" for x in (*envelope_specs(ledger), *limit_specs(ledger))
              if x.applies_to is not None and x.name in used]
    return ("Checked only where in scope: " + "; ".join(scoped) + ".") if scoped else ""


def print_check(report: CheckReport, path: str, ledger, du: DisplayUnits, console: Console | None = None) -> None:
    console = console or Console(highlight=False, markup=False)
    nf = _Fmt(du, [s.mass for s in report.states], [c for s in report.states for c in s.cg])
    frame = ledger.frame
    n_lo = len({s.loadout for s in report.states if s.loadout is not None})
    n_sq = len(report.sequences)
    loadouts = (f"{n_lo} loadout{'s' * (n_lo != 1)}" if n_lo else
                "no loadouts (checked as it stands, variable items empty)")
    console.print(T(f"Check of {path}: {loadouts}, {n_sq} sequence{'s' * (n_sq != 1)}", "bold"))
    mac = report.mac
    if mac is not None:
        console.print(Text(f"MAC: LEMAC {nf.qty('length', mac.lemac)}, length {nf.qty('length', mac.length)}"))
    console.print(_loadout_table(report, nf))
    for q in report.sequences:
        steps = "; ".join(f"{st.index} {st.label}" for st in q.steps)
        console.print(T(f"Sequence {q.name} from {q.loadout} ({len(q.path)} states): {steps}"))
    for table in (_envelope_table(report, frame, nf), *_limit_tables(report, nf), _sequence_table(report, frame, nf),
                  _allocation_table(report, nf)):
        if table is not None:
            console.print(table)
    scope = _scope_line(report, ledger)
    if scope:
        console.print(T(scope))
    n, broken = report.counts
    if report.ok:
        console.print(Text(f"All limits met: {n} checks.", style="bold"))
    else:
        console.print(T(f"LIMITS BROKEN: {broken} of {n} checks ({'; '.join(_broken_names(report))})", "bold"))
    console.print(Text(CAUTION, style="italic"))
