"""A `Report` as a list of plain blocks (headings, paragraphs, tables, charts).

The HTML and Markdown writers only escape and lay out these blocks, so the
two formats cannot drift apart. All text here is raw user text and numbers
in display units; escaping is the writers' job.
"""

from __future__ import annotations

from dataclasses import dataclass

from steelyard.core.display import AXIS_NAMES, fmt, pretty_unit
from steelyard.core.limits.limit_words import limit_line, room_line
from steelyard.core.limits.status import room_left
from steelyard.core.numbers import cell
from steelyard.core.physics.groups import UNGROUPED
from steelyard.io.report.build import ITEM_ROWS, Chart, Report
from steelyard.io.report.trend import trend_svg, trend_table, what_of


@dataclass(frozen=True)
class Block:
    kind: str  # "h1" | "h2" | "p" | "caution" | "table" | "chart" | "list" | "svg" (HTML only, made safe)
    text: str = ""
    headers: tuple[str, ...] = ()
    rows: tuple[tuple[str, ...], ...] = ()
    right: frozenset[int] = frozenset()  # right-aligned (numeric) columns
    chart: Chart | None = None
    items: tuple[str, ...] = ()


def _table(headers, rows, first_text: int = 1) -> Block:
    return Block("table", headers=tuple(headers), rows=tuple(tuple(r) for r in rows),
                 right=frozenset(range(first_text, len(headers))))


def _pct(x) -> str:
    return "—" if x is None else f"{100.0 * x:.1f} %"


class _Units:
    def __init__(self, report: Report):
        du = report.units
        self.du = du
        self.mu, self.lu = pretty_unit(du.mass), pretty_unit(du.length)
        # one count of decimals per dimension for the whole report (docs/numbers.md): 5 significant
        # figures at the heaviest total and the farthest CG shown
        masses = [report.empty.mass, *(s.mp.mass for s in report.loadouts)]
        lengths = [*report.empty.cg, *(c for g in report.groups for c in g.cg),
                   *(c for s in report.loadouts for c in s.mp.cg)]
        self.dm = du.column_decimals(masses, "mass")
        self.dl = du.column_decimals(lengths, "length")

    def m(self, kg) -> str:
        return cell(None if kg is None else self.du.m(kg), self.dm)

    def l(self, m) -> str:
        return cell(None if m is None else self.du.l(m), self.dl)


def _intro(r: Report, u: _Units) -> list[Block]:
    f = r.ledger.frame
    units = f"mass {u.mu}, length {u.lu}, inertia {pretty_unit(r.units.inertia)}"
    frame = ", ".join(f"+{a} {d}" for a, d in zip(AXIS_NAMES, (f.x, f.y, f.z)))
    return [Block("h1", f"Mass-properties report: {r.source}"),
            Block("p", f"Generated {r.generated}. {len(r.ledger.items)} items, {len(r.ledger.loadouts)} "
                       f"loadouts, {len(r.ledger.envelopes)} envelopes. Units: {units}. "
                       f"Body frame (origin at the datum): {frame}."),
            Block("caution", r.caution)]


def _weight_statement(r: Report, u: _Units) -> list[Block]:
    total = r.empty.mass
    rows = []
    for g in r.groups:
        share = None if not total > 0 else g.mass / total
        rows.append(["  " * g.depth + g.path.rsplit("/", 1)[-1], str(g.count), u.m(g.mass), _pct(share),
                     *(u.l(g.cg[k]) for k in range(3))])
    rows.append(["total", str(len(r.ledger.items)), u.m(total), _pct(1.0 if total > 0 else None),
                 *(u.l(r.empty.cg[k]) for k in range(3))])
    head = ["group", "items", f"mass [{u.mu}]", "share", *(f"CG {a} [{u.lu}]" for a in AXIS_NAMES)]
    return [Block("h2", "Weight statement by group (variable items empty)"), _table(head, rows)]


def _growth(r: Report, u: _Units) -> list[Block]:
    out: list[Block] = []
    g = r.control.get("growth")
    if g:
        head = ["group", f"basic [{u.mu}]", f"growth [{u.mu}]", "growth", f"predicted [{u.mu}]",
                *(f"basic CG {a} [{u.lu}]" for a in AXIS_NAMES),
                *(f"predicted CG {a} [{u.lu}]" for a in AXIS_NAMES)]
        rows = []
        for b in [*g["groups"], {"group": "total", **g["total"]}]:
            rows.append([b["group"], u.m(b["basic_mass_kg"]), u.m(b["growth_kg"]), _pct(b["growth_fraction"]),
                         u.m(b["predicted_mass_kg"]), *(u.l(c) for c in b["basic_cg_m"]),
                         *(u.l(c) for c in b["predicted_cg_m"])])
        out += [Block("h2", "Basic vs predicted mass (growth allowance by design maturity)"),
                Block("p", "Predicted = basic × (1 + growth allowance); each item's growth sits at its own CG. "
                           "Variable items empty."),
                _table(head, rows)]
    allocations = r.control.get("allocations")
    if allocations:
        rows = [[a["group"] or "(whole vehicle)", u.m(a["allocation_kg"]), u.m(a["basic_kg"]),
                 u.m(a["predicted_kg"]), u.m(a["margin_kg"]), "within" if a["margin_kg"] >= 0 else "OVER"]
                for a in allocations]
        out += [Block("h2", "Allocations (not-to-exceed)"),
                _table(["group", f"allocation [{u.mu}]", f"basic [{u.mu}]", f"predicted [{u.mu}]",
                        f"margin [{u.mu}]", "status"], rows)]
    return out


def _items(r: Report, u: _Units) -> list[Block]:
    led = r.ledger
    grown = bool(r.control.get("growth"))
    head = ["id", "name", "group", "qty", f"mass [{u.mu}]", *(f"{a} [{u.lu}]" for a in AXIS_NAMES)]
    if grown:
        head += ["maturity", "growth", f"predicted [{u.mu}]"]
    rows = []
    for i, it in enumerate(led.items[:ITEM_ROWS]):
        row_mass = it.mass * it.quantity
        row = [it.id, it.name or it.id, it.group or UNGROUPED, str(it.quantity),
               u.m(row_mass) + (" (full)" if it.variable else ""), *(u.l(c) for c in it.cg)]
        if grown:
            f = float(r.fractions[i])
            row += [str(it.maturity or ""), _pct(f), u.m(row_mass * (1 + f))]
        rows.append(row)
    out = [Block("h2", "Items"), Block("table", headers=tuple(head), rows=tuple(map(tuple, rows)),
                                       right=frozenset(range(3, len(head))) - ({len(head) - 3} if grown else set()))]
    if r.items_left_out:
        out.append(Block("p", f"{r.items_left_out} more items not listed; `steelyard export --csv` lists them all."))
    return out


def _loadouts(r: Report, u: _Units) -> list[Block]:
    if not r.loadouts:
        return []
    rows = [[x.mark, x.label, u.m(x.mp.mass), *(u.l(x.mp.cg[k]) for k in range(3))] for x in r.loadouts]
    out = [Block("h2", "Loadouts"),
           _table(["mark", "loadout", f"mass [{u.mu}]", *(f"CG {a} [{u.lu}]" for a in AXIS_NAMES)], rows, 2)]
    uncertain = [x for x in r.loadouts if x.control.get("uncertainty")]
    if r.ledger.envelopes:
        with_mc = any(x.control.get("uncertainty", {}) and x.control["uncertainty"].get("monte_carlo")
                      for x in r.loadouts)
        head = ["loadout", "envelope", "axis", "status", f"CG [{u.lu}]", f"allowed [{u.lu}]",
                f"margin [{u.lu}]", f"mass margin [{u.mu}]"] + (["P(outside), Monte Carlo"] if with_mc else [])
        rows = []
        for x in r.loadouts:
            for e in x.envelopes:
                allowed = "outside its mass range" if e.limits is None else f"{u.l(e.lo)} … {u.l(e.hi)}"
                status = "does not apply" if e.name in _scoped_out(x) else "inside" if e.inside else "OUTSIDE"
                row = [x.label, e.name, e.axis, status, u.l(e.cg), allowed,
                       u.l(e.margin), u.m(e.mass_margin)]
                if with_mc:
                    mc = x.monte_carlo(e.name)
                    row.append("—" if mc is None else f"{mc['p_outside']:.4f} ± {mc['std_error']:.4f}")
                rows.append(row)
        out += [Block("h2", "Loadouts against envelopes"), _table(head, rows, 4),
                Block("p", "Margin: distance from the CG to the nearer limit at this mass, negative outside. "
                           "Mass margin: mass that could be added at this CG before the envelope's edge.")]
        if with_mc:
            mc = next(x.control["uncertainty"]["monte_carlo"] for x in uncertain
                      if x.control["uncertainty"].get("monte_carlo"))
            out.append(Block("p", f"P(outside): fraction of {mc['samples']:,} seeded samples (seed {mc['seed']}) "
                                  "outside the envelope, ± its binomial standard error; with none outside, "
                                  f"about {3 / mc['samples']:.1e} is an upper 95 % bound (rule of three)."))
        out.append(Block("caution", r.caution))
    out += _limits(r)
    if uncertain:
        head = ["loadout", f"σ mass [{u.mu}]", *(f"σ CG {a} [{u.lu}]" for a in AXIS_NAMES),
                f"worst case mass ± [{u.mu}]", *(f"worst case CG {a} ± [{u.lu}]" for a in AXIS_NAMES)]
        rows = [[x.label, u.m(q["sigma_mass_kg"]), *(u.l(c) for c in q["sigma_cg_m"]), u.m(q["worst_mass_kg"]),
                 *(u.l(c) for c in q["worst_cg_m"])]
                for x in uncertain if (q := x.control["uncertainty"])]
        out += [Block("h2", "Uncertainty of mass and CG"),
                Block("p", "σ: first-order propagation of the items' tolerances, inputs independent. Worst case: "
                           "sum of |sensitivity| × bound (a sigma-kind tolerance counts as 3σ)."),
                _table(head, rows)]
    return out


def _scoped_out(x) -> set[str]:
    """Envelopes whose conditions / loadouts / sequences leave this loading out (as `check` reads them)."""
    return set() if x.check is None else {f.name for f in x.check.findings if f.kind == "envelope" and not f.applies}


def _limits(r: Report) -> list[Block]:
    """Each loading's [[limit]]s and the room left at its CG, in the editor's and `rollup`'s words."""
    if not r.ledger.limits and not r.ledger.envelopes:
        return []
    rows = []
    for x in r.loadouts:
        if x.check is None:
            continue
        rows += [[x.label, limit_line(f, r.units)] for f in x.check.findings if f.kind != "envelope"]
        rows.append([x.label, room_line(room_left(x.check.findings), r.units)])
    if not rows:
        return []
    return [Block("h2", "Limits and room left"),
            Block("p", "Scoped as steelyard check scopes them. Room left: mass that can still be added at the "
                       "CG, the least of every applicable envelope's top and max_mass limit, and which one binds."),
            Block("table", headers=("loadout", "limit"), rows=tuple(map(tuple, rows)))]


def _charts(r: Report) -> list[Block]:
    out: list[Block] = []
    for c in r.charts:
        out += [Block("h2", f"Envelope {c.envelope!r} (CG {c.axis} against mass)"), Block("chart", chart=c)]
    return out


def _sequences(r: Report, u: _Units) -> list[Block]:
    s = r.sequences
    if not s["names"]:
        return []
    out = [Block("h2", "Sequences")]
    if s["note"]:
        return out + [Block("list", items=tuple(s["names"])), Block("p", f"Sequences {s['note']}.")]
    if not s["rows"]:
        return out + [Block("list", items=tuple(s["names"])), Block("p", "No envelope to check them against.")]
    rows = [[x["sequence"], x["loadout"], x["envelope"], str(x["states"]), str(x["outside"]),
             u.l(x["least_margin_m"]), x["least_at"], x["first_outside_at"] or "—"] for x in s["rows"]]
    out += [_table(["sequence", "from loadout", "envelope", "states", "outside", f"least margin [{u.lu}]",
                    "least margin at", "first outside at"], rows, 3),
            Block("p", "Every state of each burn or drop sequence, envelope crossings included, checked against "
                       "every envelope; a state outside an envelope's mass range has no margin and counts "
                       "as outside."),
            Block("caution", r.caution)]
    return out


def _weighing(r: Report, u: _Units) -> list[Block]:
    w = r.weighing
    if w is None:
        return []
    rows = [[p["name"], *(u.l(c) for c in p["at_m"]), u.m(p["reading_kg"]), u.m(p["tare_kg"]), u.m(p["net_kg"])]
            for p in w["points"]]
    out = [Block("h2", "Weighing"),
           _table(["point", *(f"{a} [{u.lu}]" for a in AXIS_NAMES), f"reading [{u.mu}]", f"tare [{u.mu}]",
                   f"net [{u.mu}]"], rows)]
    adj = [["on board, removed", a["name"], u.m(a["mass_kg"]), *(u.l(c) for c in a["at_m"])] for a in w["on_board"]]
    adj += [["missing, added", a["name"], u.m(a["mass_kg"]), *(u.l(c) for c in a["at_m"])] for a in w["missing"]]
    rows = [["weighed", "", u.m(w["weighed_mass_kg"]), *(u.l(c) for c in w["weighed_cg_m"])], *adj,
            ["empty (basic)", "", u.m(w["empty_mass_kg"]), *(u.l(c) for c in w["empty_cg_m"])]]
    out.append(_table(["", "entry", f"mass [{u.mu}]", *(f"{a} [{u.lu}]" for a in AXIS_NAMES)], rows, 2))
    cmp_ = w["comparison"]
    if cmp_:
        out.append(Block("p", f"Compared with item {cmp_['item']!r}: mass {u.m(cmp_['old_mass_kg'])} → "
                              f"{u.m(cmp_['new_mass_kg'])} {u.mu} (Δ {u.m(cmp_['delta_mass_kg'])}); CG "
                              + ", ".join(f"{a} {u.l(o)} → {u.l(n)}" for a, o, n in
                                          zip(AXIS_NAMES, cmp_["old_cg_m"], cmp_["new_cg_m"])) + f" {u.lu}."))
    return out


def _trend(r: Report) -> list[Block]:
    t = r.trend
    if t is None:
        return []
    headers, rows, right = trend_table(t, r.units)
    skipped = len(t.skipped)
    note = (f"{len(t.points)} commit{'s' if len(t.points) != 1 else ''} changed the file ({what_of(t)}); "
            "committed versions only, oldest first. Predicted = basic × (1 + growth allowance); "
            "margin = allocation − predicted.")
    if skipped:
        note += f" {skipped} could not be read (the reason is beside each)."
    return [Block("h2", "Mass history (git)"), Block("p", note), Block("svg", trend_svg(t, r.units)),
            Block("table", headers=tuple(headers), rows=tuple(map(tuple, rows)), right=frozenset(right))]


def _changes(r: Report) -> list[Block]:
    title = "Change log" + (f" since {r.since}" if r.since else "")
    if not r.changes:
        return [Block("h2", title), Block("p", "No entries.")]
    notes = [k for k in ("reason", "request") if any(c.get(k) for c in r.changes)]  # columns only when used
    rows = [[str(c["time"] if c["time"] is not None else "") + ("" if c["time_readable"] else " (unreadable time)"),
             str(c["author"] or ""), str(c["action"] or ""), str(c["item"] or ""), str(c["summary"] or ""),
             *(str(c.get(k) or "") for k in notes)]
            for c in r.changes]
    return [Block("h2", title), _table(["time", "author", "action", "item", "summary", *notes], rows, 99)]


def report_blocks(report: Report) -> list[Block]:
    u = _Units(report)
    return [*_intro(report, u), *_weight_statement(report, u), *_growth(report, u), *_loadouts(report, u),
            *_sequences(report, u), *_charts(report), *_weighing(report, u), *_items(report, u),
            *_trend(report), *_changes(report), Block("caution", report.caution)]
