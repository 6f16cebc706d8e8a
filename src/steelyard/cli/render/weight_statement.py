"""The weight statement by group as fixed-width text.

A rich Table measures and wraps every cell of every row; a statement of a
thousand groups then takes seconds to print. Here each column's width is
known once its numbers are formatted (docs/numbers.md: one count of decimals
per column), so the lines are laid out directly: the same look as the other
tables (a heading, a rule, right-aligned numbers), in milliseconds.
"""

from __future__ import annotations

from rich.cells import cell_len, set_cell_size
from rich.text import Text

from steelyard.core.display import AXIS_NAMES, pretty_unit, visible
from steelyard.core.numbers import column, column_decimals


def _fit(text: str, width: int) -> str:
    """Left-aligned in `width` cells; cut with an ellipsis when longer."""
    n = cell_len(text)
    if n > width:
        return set_cell_size(text, width - 1) + "…"
    return text + " " * (width - n)


def weight_statement(st, mp, du, count: int, width: int) -> Text:
    """Rows of group subtotals `st` and the total `mp` (`count` items) for a console `width` wide."""
    mu, lu = pretty_unit(du.mass), pretty_unit(du.length)
    fm, fl, fmo = du.factor("mass"), du.factor("length"), du.factor("moment")
    wide = width >= 100  # item count and share only where they fit
    heads = [*(("items",) if wide else ()), f"mass [{mu}]", *(("%",) if wide else ()),
             *(f"{a} [{lu}]" for a in AXIS_NAMES), f"moment [{pretty_unit(du.moment)}]"]
    # each column one count of decimals, the total row included; x, y, z at one resolution
    masses = [du.m(g.mass) for g in st] + [du.m(mp.mass)]
    cgs = [[du.l(g.cg[k]) for g in st] + [du.l(mp.cg[k])] for k in range(3)]
    moms = [du.mom(g.mass * g.cg[0]) if g.mass else 0.0 for g in st] + [du.mom(mp.mass * mp.cg[0])]
    dcg = column_decimals([v for c in cgs for v in c], "length", fl)
    cols = [column(masses, "mass", fm), *(column(c, "length", fl, dcg) for c in cgs), column(moms, "moment", fmo)]
    if wide:
        shares = [100.0 * g.mass / mp.mass if mp.mass > 0 else None for g in st] + [100.0]
        cols.insert(1, column(shares, "percent"))
        cols.insert(0, [str(g.count) for g in st] + [str(count)])
    widths = [max(len(h), 7, max(map(len, c))) for h, c in zip(heads, cols)]
    room = width - sum(widths) - 3 * len(heads) - 4
    name_w = max(8, min(30, room))
    labels = [visible("  " * g.depth + g.path.rsplit("/", 1)[-1]) for g in st]
    gap = "   "

    def line(label: str, cells) -> str:
        return " " + _fit(label, name_w) + gap + gap.join(c.rjust(w) for c, w in zip(cells, widths)) + " "

    out = Text()
    out.append("Weight statement by group\n", style="italic")
    out.append(line("group", heads) + "\n", style="bold")
    out.append(" " + "─" * (name_w + sum(widths) + len(gap) * len(widths)) + " \n")
    rows = list(zip(*cols))
    out.append("\n".join(line(label, row) for label, row in zip(labels, rows)) + "\n")
    total = line("total", rows[-1])
    out.append(total[:1])
    out.append(total[1:6], style="bold")
    out.append(total[6:])
    return out
