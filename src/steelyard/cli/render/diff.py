"""Human-readable diff report: rich tables on stdout, numbers in display units.

Ids, names, groups, paths and loadout names come from files anyone can write:
each reaches the terminal as a rich Text with control characters made visible
(never as markup), so a name cannot clear the screen or restyle the report.
"""

from __future__ import annotations


from rich.console import Console
from rich.table import Table
from rich.text import Text

from steelyard.core.caution import CAUTION
from steelyard.core.history.diff import LedgerDiff, change_rows
from steelyard.core.history.diff_text import definition_sections
from steelyard.core.numbers import number
from steelyard.core.display import AXIS_NAMES, DisplayUnits, fmt, pretty_unit, visible
from steelyard.core.document.model import FileUnits

# C0 and C1 controls, DEL, and the bidirectional overrides/isolates
def safe(text: object) -> str:
    """Text with each control character shown as a visible symbol (␛ for ESC)."""
    return visible(text)


def T(text: object, style: str = "") -> Text:  # noqa: N802 - reads like the Text it makes
    return Text(safe(text), style=style)


def _signed(x: float | None, digits: int = 4) -> str:
    if x is None or x != x:
        return "—"
    return ("+" if x > 0 else "") + fmt(x, digits)


def _more(console: Console, total: int, shown: int) -> None:
    if total > shown:
        console.print(T(f"… and {total - shown:,} more (--max-items 0 shows all, --json gives every row)",
                           style="italic"))


def _limit(n: int, max_items: int) -> int:
    return n if max_items == 0 else min(n, max_items)


def _item_table(console, title, ids, side, du, max_items) -> None:
    if not ids:
        return
    lu, mu = pretty_unit(du.length), pretty_unit(du.mass)
    t = Table(title=title, title_justify="left")
    for col in ("id", "name", f"mass [{mu}]", f"x [{lu}]", f"y [{lu}]", f"z [{lu}]"):
        t.add_column(col, justify="left" if col in ("id", "name") else "right",
                     overflow="fold" if col in ("id", "name") else "ellipsis")
    shown = _limit(len(ids), max_items)
    for item_id in ids[:shown]:
        i = side.ledger.index[item_id]
        t.add_row(T(item_id), T(side.labels[i]), du.num(side.row_mass[i], 'mass'),
                  *(du.num(side.cg[i, k], 'length') for k in range(3)))
    console.print(t)
    _more(console, len(ids), shown)


def _changed_table(console, diff: LedgerDiff, du, max_items) -> None:
    if not diff.changed:
        return
    t = Table(title="Changed items (A → B)", title_justify="left")
    files = any(c.file for c in diff.changed)  # a tree: say which file each item comes from
    for col in ("id", *(("file",) if files else ()), "field", "A", "B"):
        t.add_column(col, justify="left" if col in ("id", "file", "field") else "right", overflow="fold")
    shown = _limit(len(diff.changed), max_items)
    for c in diff.changed[:shown]:
        first = True
        for name, (old, new) in c.fields.items():
            for label, a_text, b_text in change_rows(name, old, new, du):
                lead = [T(c.id if first else "")] + ([T((c.file or "(this file)") if first else "")] if files else [])
                t.add_row(*lead, T(label), T(a_text), T(b_text))
                first = False
    console.print(t)
    _more(console, len(diff.changed), shown)


def _ranked_table(console, diff: LedgerDiff, du, max_items) -> None:
    if not diff.ranked:
        return
    lu, mu = pretty_unit(du.length), pretty_unit(du.mass)
    t = Table(title="Items ranked by how far each alone moves A's CG", title_justify="left")
    for col in ("#", "id", "change", f"Δmass [{mu}]", f"ΔCG x [{lu}]", f"ΔCG y [{lu}]", f"ΔCG z [{lu}]",
                f"|ΔCG| [{lu}]"):
        t.add_column(col, justify="left" if col in ("id", "change") else "right",
                     overflow="fold" if col == "id" else "ellipsis")
    shown = _limit(len(diff.ranked), max_items)
    for k, r in enumerate(diff.ranked[:shown], 1):
        t.add_row(str(k), T(r.id), r.kind, _signed(du.m(r.mass_delta)),
                  *(_signed(du.l(v)) for v in r.cg_shift), du.num(r.shift, 'length'))
    console.print(t)
    _more(console, len(diff.ranked), shown)


def _totals(console, diff: LedgerDiff, du) -> None:
    a, b = diff.a.mp, diff.b.mp
    lu, mu, iu = pretty_unit(du.length), pretty_unit(du.mass), pretty_unit(du.inertia)
    frame = diff.b.ledger.frame
    t = Table(title="Effect on totals", title_justify="left")
    for col in ("quantity", "A", "B", "Δ (B − A)"):
        t.add_column(col, justify="left" if col == "quantity" else "right")
    t.add_row(f"mass [{mu}]", du.num(a.mass, 'mass'), du.num(b.mass, 'mass'), _signed(du.m(diff.delta_mass)))
    for k in range(3):
        t.add_row(f"CG {AXIS_NAMES[k]} (+{frame.direction(k)}) [{lu}]", du.num(a.cg[k], 'length'), du.num(b.cg[k], 'length'),
                  _signed(du.l(diff.delta_cg[k])))
    for r, c in ((0, 0), (1, 1), (2, 2), (0, 1), (0, 2), (1, 2)):
        name = f"I{AXIS_NAMES[r]}{AXIS_NAMES[c]} [{iu}]"
        t.add_row(name, du.num(a.inertia_cg[r, c], 'inertia'), du.num(b.inertia_cg[r, c], 'inertia'),
                  _signed(du.i(diff.delta_inertia[r, c])))
    if diff.delta_principal is not None:
        for k in range(3):
            t.add_row(f"principal {k + 1} [{iu}]", du.num(a.principal_moments[k], 'inertia'),
                      du.num(b.principal_moments[k], 'inertia'), _signed(du.i(diff.delta_principal[k])))
    console.print(t)
    console.print(T("Inertia about each side's own CG, tensor form (off-diagonals are minus the products "
                       "of inertia); principal moments ascending.", style="italic"))


def _status(r) -> str:
    return "—" if r is None else ("INSIDE" if r.inside else "OUTSIDE")


def _envelopes(console, diff: LedgerDiff, du) -> None:
    if not diff.envelopes:
        return
    lu = pretty_unit(du.length)
    t = Table(title="CG envelopes", title_justify="left")
    for col in ("envelope", "A", "B", f"A margin [{lu}]", f"B margin [{lu}]", f"Δ margin [{lu}]", ""):
        t.add_column(col, justify="right" if "margin" in col else "left",
                     overflow="fold" if col == "envelope" else "ellipsis")
    for e in diff.envelopes:
        margin = [None if r is None or r.margin is None else du.l(r.margin) for r in (e.a, e.b)]
        delta = None if e.margin_delta is None else du.l(e.margin_delta)
        t.add_row(T(e.name), _status(e.a), _status(e.b), number(margin[0], 'length', du.factor('length')), number(margin[1], 'length', du.factor('length')), _signed(delta),
                  "status changed" if e.status_changed else "")
    console.print(t)
    console.print(T(CAUTION, style="italic"))


def _definitions(console, diff: LedgerDiff, du) -> None:
    """Each kind of definition that differs in its own section: added, removed, and old → new by field."""
    for title, lines in definition_sections(diff, du):
        console.print(T(f"{title}:"))
        for line in lines:
            console.print(T(line))


def _placements(console, diff: LedgerDiff, du) -> None:
    """Assemblies placed, moved or removed, each with what it carries and how far it alone moves A's CG."""
    if not diff.placements:
        return
    lu, mu = pretty_unit(du.length), pretty_unit(du.mass)
    console.print(T("Assembly placements (A → B):"))
    for c in diff.placements:
        console.print(T(f"  {c.kind} {c.id} ({c.file})"))
        for key, (old, new) in c.fields.items():
            if key == "at":
                old = None if old is None else "[" + ", ".join(du.num(v, "length") for v in old) + f"] {lu}"
                new = None if new is None else "[" + ", ".join(du.num(v, "length") for v in new) + f"] {lu}"
            console.print(T(f"    {key}: {'—' if old is None else old} → {'—' if new is None else new}"))
        ma, mb = c.mass
        console.print(T(f"    carries {'—' if ma is None else du.num(ma, 'mass')} → {'—' if mb is None else du.num(mb, 'mass')}"
                        f" {mu}; moves A's CG by [" + ", ".join(_signed(du.l(v)) for v in c.cg_shift) + f"] {lu}"))
        if c.folded:
            console.print(T(f"    ({c.folded:,} items of it moved with it; the file itself is unchanged)"))

def _logged(console, diff: LedgerDiff, max_items: int) -> None:
    """The change-log entries B holds and A does not: what the diff spans, each with its reason."""
    from steelyard.core.history.changes import logged_since

    logged = logged_since(diff.a.ledger, diff.b.ledger)
    if not logged:
        return
    shown = _limit(len(logged), max_items)
    console.print(T(f"Changes logged in B since A ({len(logged):,}), oldest first:"))
    for c in logged[:shown]:
        what = " ".join(x for x in (c.action, c.item or "") if x)
        why = "; ".join(x for x in (c.reason and f"why: {c.reason}", c.request and f"request {c.request}") if x)
        console.print(T(f"  {c.time}  {c.author}  {what}: {c.summary}" + (f"  ({why})" if why else "  (no reason given)")))
    _more(console, len(logged), shown)


def print_diff(diff: LedgerDiff, a_label: str, b_label: str, system: str | None, max_items: int,
               file_units: FileUnits | None, console: Console | None = None) -> None:
    console = console or Console(highlight=False, markup=False)
    du = DisplayUnits.choose(file_units or FileUnits(), system)
    console.print(T(f"Compare A: {a_label}  →  B: {b_label}", style="bold"))
    console.print(T(f"{len(diff.added):,} added, {len(diff.removed):,} removed, {len(diff.changed):,} changed "
                       f"(A has {len(diff.a.mass):,} items, B {len(diff.b.mass):,}); compared as carried, SI values "
                       "equal within a few ulps count as the same"))
    if diff.frame:
        moved = ", ".join(f"+{k} {o} → {n}" for k, (o, n) in diff.frame.items())
        console.print(T(f"Body frame differs ({moved}): coordinates of A and B mean different directions.",
                           style="bold"))
    _item_table(console, "Added items (in B, not in A)", list(diff.added), diff.b, du, max_items)
    _item_table(console, "Removed items (in A, not in B)", list(diff.removed), diff.a, du, max_items)
    _placements(console, diff, du)
    _changed_table(console, diff, du, max_items)
    _ranked_table(console, diff, du, max_items)
    _totals(console, diff, du)
    _envelopes(console, diff, du)
    _definitions(console, diff, du)
    _logged(console, diff, max_items)

