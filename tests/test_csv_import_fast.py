"""CSV import a column at a time: the same ledger as an outside reading of the same cells.

References, all outside the program:
- the stdlib `csv` module reads the cells; `float()` of a cell, checked against a
  pattern written here from the rule "ASCII decimal digits, one point, an optional
  exponent" (Python's float() alone also takes "1_5", "nan", other scripts' digits),
  with `fractions.Fraction` to tell a literal that is not zero from one that is;
- unit factors are the NIST SP 811 exact ones (1 lb = 0.45359237 kg, 1 in = 0.0254 m,
  1 g = 1e-3 kg, 1 mm = 1e-3 m); "within 2 ulps" is IEEE 754 double spacing (math.ulp),
  the most one unit conversion through a decimal text may move a value;
- `tomllib` reads back the TOML the import writes.
"""

from __future__ import annotations

import csv
import glob
import io
import math
import re
import sys
import tomllib
from fractions import Fraction
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from steelyard.core.document.model import Ledger
from steelyard.core.errors import SteelyardError
from steelyard.io.exchange import csv_check, csv_direct
from steelyard.io.exchange.csv_cells import parse_cells
from steelyard.io.exchange.csv_io import check_ledger, ledger_to_csv, read_csv
from steelyard.io.ledger.file import load_ledger

ROOT = Path(__file__).resolve().parents[1]
FIXTURES = [f for f in sorted(glob.glob(str(ROOT / "fixtures" / "*.toml")) +
                              glob.glob(str(ROOT / "fixtures" / "*" / "*" / "*.toml"))) if "/bad/" not in f]
sys.path.insert(0, str(ROOT / "tests" / "perf"))
from make_ledger import ledger_text  # noqa: E402

MASS = {"kg": 1.0, "lb": 0.45359237, "g": 1e-3}  # NIST SP 811, exact
LENGTH = {"m": 1.0, "in": 0.0254, "mm": 1e-3}
ASCII_DECIMAL = re.compile(r"[+-]?([0-9]+(\.[0-9]*)?|\.[0-9]+)([eE][+-]?[0-9]+)?")
HEAD = re.compile(r"(.*?)\s*\[(.*)\]")


def close(a: float, b: float, n: int = 2) -> bool:
    return a == b or abs(a - b) <= n * math.ulp(max(abs(a), abs(b)))


def factor(unit: str) -> float:
    """SI per unit for the units the fixtures use: mass, length, and mass*length**2."""
    if unit in MASS:
        return MASS[unit]
    if unit in LENGTH:
        return LENGTH[unit]
    m, length = unit.split("*", 1)
    assert length.endswith("**2"), unit
    return MASS[m] * LENGTH[length[:-3]] ** 2


def reference_rows(text: str) -> list[dict]:
    """Each CSV row as {column: (unit, cell)}, read by the stdlib csv module."""
    rows = list(csv.reader(io.StringIO(text, newline="")))
    head = []
    for cell in rows[0]:
        m = HEAD.fullmatch(cell)
        head.append((m.group(1), m.group(2)) if m else (cell, None))
    return [{name: (unit, cell) for (name, unit), cell in zip(head, row)} for row in rows[1:] if any(row)]


def check_against_reference(text: str, ledger: Ledger) -> None:
    rows = reference_rows(text)
    assert [r["id"][1] for r in rows] == [it.id for it in ledger.items]
    for r, it in zip(rows, ledger.items):
        assert it.name == r.get("name", (None, ""))[1] and it.group == r.get("group", (None, ""))[1]
        assert close(float(r["mass"][1]) * factor(r["mass"][0]), it.mass), it.id
        for k, c in enumerate("xyz"):
            assert close(float(r[c][1]) * factor(r[c][0]), it.cg[k]), (it.id, c)
        q = r.get("quantity", (None, ""))[1]
        assert it.quantity == (int(q) if q else 1)
        assert it.variable == (r.get("variable", (None, "false"))[1].lower() == "true")
        cells = [r[c] for c in ("xx", "yy", "zz", "xy", "xz", "yz") if c in r]
        if not any(cell for _, cell in cells):
            assert it.inertia is None or not cells, it.id
        else:
            want = [float(cell or 0) * factor(unit) for unit, cell in cells]
            assert all(map(close, want, it.inertia)), it.id


def check_written(ledger: Ledger) -> None:
    """The text the import saves, read by tomllib: every item, every number (times its unit) as imported."""
    doc = tomllib.loads(check_ledger(ledger, "x.csv"))
    fm, fl = factor(doc["units"]["mass"]), factor(doc["units"]["length"])
    fi = factor(doc["units"].get("inertia", "kg*m**2"))
    assert [d["id"] for d in doc["item"]] == [it.id for it in ledger.items]
    for d, it in zip(doc["item"], ledger.items):
        assert close(d["mass"] * fm, it.mass) and all(close(a * fl, b) for a, b in zip(d["cg"], it.cg)), it.id
        if "inertia" in d:
            t = d["inertia"]
            assert all(close(t[c] * fi, v) for c, v in zip(("xx", "yy", "zz", "xy", "xz", "yz"), it.inertia))
        else:
            assert it.inertia is None


@pytest.mark.parametrize("path", FIXTURES, ids=lambda p: Path(p).name)
def test_fixtures_exported_then_imported_match_the_reference(path):
    text = ledger_to_csv(load_ledger(path))
    imp = read_csv(text, source="f.csv")
    check_against_reference(text, imp.ledger)
    check_written(imp.ledger)
    # the merge path (item by item) into an empty ledger with the same units builds the same items
    merged = read_csv(text, source="f.csv", into=Ledger(units=imp.ledger.units)).ledger
    assert merged.items == imp.ledger.items


@pytest.mark.parametrize("seed", [1, 2])
def test_generated_ledgers_exported_then_imported_match_the_reference(tmp_path, seed):
    src = tmp_path / "g.toml"
    src.write_text(ledger_text(1500, seed=seed))
    text = ledger_to_csv(load_ledger(src))
    imp = read_csv(text, source="g.csv")
    check_against_reference(text, imp.ledger)
    check_written(imp.ledger)
    merged = read_csv(text, source="g.csv", into=Ledger(units=imp.ledger.units)).ledger
    assert merged.items == imp.ledger.items


# ------------------------------------------------------------------------------ number cells

def reference_cell(cell: str) -> float | str | None:
    """float of an ASCII decimal a double can hold; "range" for one it cannot (inf, or a non-zero read
    as 0); None for a cell that is no ASCII decimal at all."""
    if cell == "":
        return math.nan
    if not ASCII_DECIMAL.fullmatch(cell):
        return None
    x = float(cell)
    if math.isinf(x) or (x == 0.0 and Fraction(cell) != 0):
        return "range"
    return x


_CELL = st.one_of(st.text("0123456789.+-eE", max_size=8), st.text("0123456789.+-eE _\u0664nafi,", max_size=6),
                  st.floats(allow_nan=False, allow_infinity=False).map(repr), st.just(""),
                  st.sampled_from(["1e400", "1e-400", "0e-999", "5e-324", "nan", "-inf", "1_5", "1.", ".5"]))


@settings(max_examples=300, deadline=None, suppress_health_check=list(HealthCheck))
@given(st.lists(_CELL, min_size=1, max_size=12))
def test_number_columns_read_as_the_reference_reads_each_cell(cells):
    vals, blank, bad, why = parse_cells(cells, False)
    want = [reference_cell(c) for c in cells]
    misspelt = next((k for k, w in enumerate(want) if w is None), None)
    if misspelt is not None:  # the column's spelling is checked before its range: the first misspelt cell
        assert bad == misspelt, (cells, bad, why)
    elif "range" in want:
        assert bad is not None and want[bad] == "range", (cells, bad, why)
    else:
        assert bad is None, (cells, bad, why)
    if bad is None:
        assert blank.tolist() == [c == "" for c in cells]
        assert np.array_equal(vals, np.array(want), equal_nan=True)


# ------------------------------------------------------------------------------ rows and messages

def test_lines_are_counted_as_written_with_blank_lines_and_a_cell_over_two_lines():
    # line 1 header, line 2 blank, line 3-4 one record (a quoted name over two lines), line 5 the bad row
    text = 'id,name,mass [kg],x [m],y [m],z [m]\n\na,"two\nlines",1,0,0,0\nb,,1x,0,0,0\n'
    with pytest.raises(SteelyardError) as err:
        read_csv(text, source="l.csv")
    assert str(err.value).count("\n") == 0
    assert "line 5" in str(err.value) and "item 'b'" in str(err.value) and "column 'mass [kg]'" in str(err.value)
    text = 'id,mass [kg],x [m],y [m],z [m]\n\n,,\na,1,0,0,0\n\nb,1,0,0,zz\n'  # blank and separator-only lines
    with pytest.raises(SteelyardError) as err:
        read_csv(text, source="l.csv")
    assert "line 6" in str(err.value) and "item 'b'" in str(err.value) and "column 'z [m]'" in str(err.value)


def test_short_rows_are_padded_and_long_rows_refused():
    ok = read_csv("id,name,mass [kg],x [m],y [m],z [m],quantity\na,,1,0,0,0\nb,n,2,0,0,0,3,,\n", source="p.csv")
    assert [(it.id, it.name, it.quantity) for it in ok.ledger.items] == [("a", "", 1), ("b", "n", 3)]
    with pytest.raises(SteelyardError, match="line 3.*has 7 cells, the header has 5"):
        read_csv("id,mass [kg],x [m],y [m],z [m]\na,1,0,0,0\nb,1,0,0,0,9,9\n", source="p.csv")


def test_bad_cell_in_the_cli_exits_2_with_one_line(tmp_path):
    import subprocess

    bad = tmp_path / "bad.csv"
    bad.write_text("id,mass [lb],x [in],y [in],z [in],variable\na,1,2,3,4,false\nb,1,2,3,4,maybe\n")
    out = tmp_path / "o.toml"
    got = subprocess.run([sys.executable, "-m", "steelyard", "import", str(bad), "-o", str(out)],
                         capture_output=True, text=True)
    assert got.returncode == 2 and not out.exists()
    lines = got.stderr.strip().splitlines()
    assert len(lines) == 1 and "bad.csv" in lines[0] and "line 3" in lines[0] and "item 'b'" in lines[0]
    assert "column 'variable'" in lines[0] and "'maybe'" in lines[0]


@pytest.mark.parametrize("writer,density", [("item path", True), ("column path", False)])
def test_a_written_ledger_that_reads_back_different_is_refused(monkeypatch, writer, density):
    # a writer that changed one number: the read-back comparison must name the CSV line and column
    # (a CSV with a density column is written from Items, one of v1 columns only from its columns)
    module, name = (csv_check, "ledger_to_toml") if density else (csv_direct, "items_only_text")
    real = getattr(module, name)

    def off_by_one(*args, **kw):
        return real(*args, **kw).replace("mass = 2.5\n", "mass = 2.6\n", 1)

    monkeypatch.setattr(module, name, off_by_one)
    head, cell = (",density [kg/m**3]", ",7") if density else ("", "")
    with pytest.raises(SteelyardError) as err:
        read_csv(f"id,mass [kg],x [m],y [m],z [m]{head}\na,1,0,0,0{cell}\nb,2.5,0,0,0{cell}\n", source="w.csv")
    msg = str(err.value)
    assert "line 3" in msg and "item 'b'" in msg and "column 'mass [kg]'" in msg and "2.6" in msg, msg


@pytest.mark.parametrize("pad", [" ", "\t", "\u00a0", "\u2003", "\x1f"])
def test_spaces_around_number_cells_are_dropped_as_str_strip_drops_them(pad):
    # reference: str.strip (Python's definition of white space) then float()
    cell = f"{pad}2.5{pad}"
    led = read_csv(f"id,mass [kg],x [m],y [m],z [m]\na,{cell},1,0,0\nb,3,{pad}1{pad},0,0\n", source="s.csv").ledger
    assert [it.mass for it in led.items] == [float(cell.strip()), 3.0]
    assert led.items[1].cg == (float(f"{pad}1{pad}".strip()), 0.0, 0.0)
