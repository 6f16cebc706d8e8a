"""The roll-up's tables drawn without rich are the characters rich draws.

Reference: rich itself (Console(width=W).print of the same Table), as the
text `steelyard rollup` printed before it stopped importing rich. Where the
plain renderer declines (too narrow, wide characters), it hands the table to
rich, so the result must match either way.
"""

from __future__ import annotations

import io
import random

import pytest
from rich.console import Console
from rich.text import Text

from steelyard.cli.render.plain import Out, Table, _to_rich, cell_len, render_table, wrap


def _rich(renderable, width: int) -> str:
    buf = io.StringIO()
    Console(file=buf, width=width, highlight=False, markup=False, color_system=None).print(renderable)
    return buf.getvalue()


def _plain_out(width: int) -> tuple[Out, io.StringIO]:
    buf = io.StringIO()
    out = Out(buf, environ={"COLUMNS": str(width)})
    return out, buf


def _statement(rows: int, seed: int, label_len: int = 12) -> Table:
    rng = random.Random(seed)
    t = Table(title="Weight statement by group", box="simple_head", pad_edge=False)
    t.add_column("group", no_wrap=True, width=14)
    for head in ("mass [lb]", "x [in]", "y [in]", "z [in]", "moment [lb·in]"):
        t.add_column(head, justify="right", no_wrap=True, min_width=max(len(head), 7))
    for k in range(rows):
        label = "  " * (k % 3) + "".join(rng.choice("abcdefgh-/") for _ in range(rng.randint(1, label_len)))
        t.add_row(label, *(f"{rng.uniform(-1e3, 1e3):,.2f}" for _ in range(4)), "—")
    t.add_row(("total", "bold"), "1.00", "2.00", "3.00", "4.00", "5.0")
    return t


def _totals(title: str) -> Table:
    t = Table(title=title)
    t.add_column("quantity")
    t.add_column("value", justify="right")
    t.add_row("mass [lb]", "1,158.15")
    t.add_row("CG x (+aft) [in]", "126.901")
    return t


@pytest.mark.parametrize("width", [20, 40, 60, 79, 80, 100, 132])
@pytest.mark.parametrize("make", [
    lambda: _statement(40, 1),
    lambda: _statement(10, 2, label_len=40),  # labels cut with an ellipsis in the fixed column
    lambda: _totals("Totals"),
    lambda: _totals("Inertia about the CG [lb·in²] (tensor; off-diagonals are minus the products)"),
])
def test_tables_match_rich(make, width):
    out, buf = _plain_out(width)
    out.table(make())
    assert buf.getvalue() == _rich(_to_rich(make()), width)


def test_plain_path_is_taken_where_it_fits():
    # the comparison above would pass trivially if every table went to rich: at 80 columns it must not
    assert render_table(_statement(40, 1), 80, lambda s, style: s) is not None
    assert render_table(_totals("Totals"), 80, lambda s, style: s) is not None


@pytest.mark.parametrize("text", [
    "Planning aid only: these figures support planning and design. Airworthiness and loading decisions "
    "rest on the approved weight-and-balance data, local regulations and licensed personnel.",
    "Roll-up of /a/very/long/path/" + "x" * 120 + ".toml — loadout: (none: variable items empty)",
    "short", "two  spaces   here and a line\nbreak inside", "",
])
@pytest.mark.parametrize("width", [10, 33, 80])
def test_paragraphs_wrap_as_rich_wraps(text, width):
    out, buf = _plain_out(width)
    out.line(text)
    assert buf.getvalue() == _rich(Text(text), width)


def test_wide_characters_go_to_rich():
    # East Asian wide characters take two cells: measured by rich, not here
    assert cell_len("機体") is None and cell_len("e\u0301") is None and cell_len("·²∫") == 3
    assert wrap("機体 " * 30, 20, pad=False) is None
    t = _totals("Totals")
    t.add_row("機体/翼", "5.00")
    out, buf = _plain_out(80)
    out.table(t)
    assert buf.getvalue() == _rich(_to_rich(t), 80)
