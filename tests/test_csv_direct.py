"""A new ledger imported without Items: the text written from the CSV's columns, checked by column.

References, outside the code under test (csv_direct, write_items.columns_text):
- the stdlib `csv` module reads the cells; each row becomes one Item through the row-by-row
  builder (`csv_model.make_item`), written by the per-item writer (`write.item_lines`, every
  number spelled by `toml_write.number`, itself checked against its full search in
  tests/test_toml_write_fast.py): the file a plain loop writes, compared byte for byte;
- `tomllib` reads the written text back;
- the rule for a cell printf's "%g" writes is a regular expression written here
  (-?(0|[1-9][0-9]*)(\\.[0-9]*[1-9])?), applied to each cell alone.
"""

from __future__ import annotations

import csv
import dataclasses
import glob
import io
import re
import sys
import tomllib
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from steelyard.core.document.model import Frame, Ledger, with_arrays
from steelyard.core.errors import SteelyardError
from steelyard.core.physics.inertia import COMPONENTS
from steelyard.core.units import unit_factor
from steelyard.io.exchange import csv_direct
from steelyard.io.exchange.csv_cells import COLUMNS, HEADER, TRUE
from steelyard.io.exchange.csv_io import check_ledger, ledger_to_csv, read_csv
from steelyard.io.exchange.csv_model import file_units, make_item
from steelyard.io.ledger.file import load_ledger
from steelyard.io.ledger.write import frame_fields, item_lines, table_lines, units_fields
from steelyard.io.ledger.write_given import cells

ROOT = Path(__file__).resolve().parents[1]
FIXTURES = [f for f in sorted(glob.glob(str(ROOT / "fixtures" / "*.toml")) +
                              glob.glob(str(ROOT / "fixtures" / "*" / "*" / "*.toml"))) if "/bad/" not in f]
sys.path.insert(0, str(ROOT / "tests" / "perf"))
from make_ledger import ledger_text  # noqa: E402

PLAIN = re.compile(r"-?(0|[1-9][0-9]*)(\.[0-9]*[1-9])?")


def reference_text(text: str, sep: str = ",", comma: bool = False) -> str:
    """The ledger file a plain loop writes for a CSV of v1 columns: stdlib csv rows, one Item each
    (make_item), each written by write.item_lines."""
    rows = [r for r in csv.reader(io.StringIO(text), delimiter=sep) if any(c.strip() for c in r)]
    head = []
    for cell in rows[0]:
        m = HEADER.match(cell.strip())
        head.append((" ".join(m.group("name").lower().split()), (m.group("unit") or "").strip()))
    unit = dict(head)
    u = file_units(unit["mass"], unit["x"], unit.get("xx") or f"{unit['mass']}*{unit['x']}**2", None)

    def num(cell: str, key: str) -> float:
        cell = cell.strip().replace(",", ".") if comma else cell.strip()
        return float(cell) * unit_factor(unit[key], COLUMNS[key])

    blocks = ["steelyard = 1", "\n".join(table_lines("units", units_fields(u))),
              "\n".join(table_lines("frame", frame_fields(Frame())))]
    for row in rows[1:]:
        c = {key: cell for (key, _), cell in zip(head, row)}
        given = [k for k in COMPONENTS if k in c and c[k].strip()]
        inertia = tuple(num(c[k], k) if c.get(k, "").strip() else 0.0 for k in COMPONENTS) if given else None
        item = make_item(c["id"], num(c["mass"], "mass"), tuple(num(c[k], k) for k in "xyz"), more={},
                         name=c.get("name", ""), group=c.get("group", ""),
                         quantity=int(c["quantity"]) if c.get("quantity", "").strip() else 1,
                         variable=c.get("variable", "").strip().lower() in TRUE, inertia=inertia)
        blocks.append("\n".join(item_lines(item, u)))
    return "\n\n".join(blocks) + "\n"


def imported_text(text: str, comma: bool = False) -> tuple[str, object]:
    imp = read_csv(text, source="d.csv", decimal_comma=comma)
    return check_ledger(imp.ledger, "d.csv"), imp  # (the same object again: the text of the import's check)


def v1_only(text: str, sep: str = ",") -> str:
    """The CSV less any column beyond v1 (so the import takes the column path)."""
    rows = list(csv.reader(io.StringIO(text), delimiter=sep))
    keep = [j for j, cell in enumerate(rows[0]) if HEADER.match(cell).group("name").strip() in csv_direct.DIRECT_COLUMNS]
    out = io.StringIO()
    csv.writer(out, delimiter=sep, lineterminator="\n").writerows([[r[j] for j in keep] for r in rows])
    return out.getvalue()


@pytest.mark.parametrize("seed,n", [(1, 400), (5, 1500), (9, 60)])
def test_generated_ledgers_import_to_the_per_item_writers_bytes(seed, n, tmp_path):
    src = tmp_path / "g.toml"
    src.write_text(ledger_text(n, seed=seed))
    ledger = load_ledger(src)
    for system, comma in ((None, False), ("si", False), ("us", False), (None, True)):
        sep = ";" if comma else ","
        text = ledger_to_csv(ledger, system=system, decimal_comma=comma)
        assert csv_direct.direct(type("T", (), {"index": dict.fromkeys(
            HEADER.match(c).group("name").strip() for c in text.splitlines()[0].split(sep))})())
        written, imp = imported_text(text, comma)
        assert written == reference_text(text, sep, comma)
        back = tomllib.loads(written)["item"]
        assert [b["id"] for b in back] == [it.id for it in ledger.items]
        assert len(imp.ledger.items) == n


def test_edited_cells_import_to_the_per_item_writers_bytes():
    # spellings a spreadsheet may leave: trailing zeros, exponents, a plus sign, spaces, blanks,
    # whole numbers, yes/no flags, a y column in another unit, products left blank
    text = ("id,name,group,mass [lb],x [in],y [mm],z [in],quantity,variable,xx [lb*in**2],yy [lb*in**2],"
            "zz [lb*in**2],xy [lb*in**2]\n"
            "a,,g/h,1.50, 2e1 ,+3,4.25,,yes,1,1,1,\n"
            "b,B,,0.0001,-0,0,1e-5,3,n,,,,\n"
            "c,C \"q\",x,12345678901234,0.1,0.2,0.3,1,TRUE,2.5,2.5,4.0000000000000001,0.25\n"
            "d,D,,7,1.23456789012345678,-7,-0.000123,2,0,,,,\n")
    written, _ = imported_text(text)
    assert written == reference_text(text)


@pytest.mark.parametrize("path", FIXTURES, ids=lambda p: Path(p).name)
def test_fixtures_import_to_the_per_item_writers_bytes(path):
    ledger = load_ledger(path)
    for system in (None, "si"):
        text = v1_only(ledger_to_csv(ledger, system=system))
        written, _ = imported_text(text)
        assert written == reference_text(text)


@settings(max_examples=300, deadline=None, suppress_health_check=list(HealthCheck))
@given(st.lists(st.text("0123456789.-e+ ", max_size=18), max_size=14))
def test_cells_judges_each_cell_by_the_printf_rule(texts):
    texts = [t.replace(" ", "") for t in texts]
    plain, short = cells("".join(t + "\n" for t in texts))
    assert plain.tolist() == [PLAIN.fullmatch(t) is not None or t in ("", "-") for t in texts]
    assert short.tolist() == [len(t) - t.startswith("-") <= 15 for t in texts]


def _read_back_changed(monkeypatch, **change):
    """Make the read-back give item 'b' with `change` applied (a writer that changed it)."""
    real = csv_direct.ledger_from_text

    def changed(text, *, source):
        led = real(text, source=source)
        items = tuple(dataclasses.replace(it, **change) if it.id == "b" else it for it in led.items)
        out = Ledger(items, led.units)
        return with_arrays(out, out.arrays) if "arrays" not in change else out

    monkeypatch.setattr(csv_direct, "ledger_from_text", changed)


CSV = "id,name,mass [lb],x [in],y [in],z [in],xx [lb*in**2],yy [lb*in**2],zz [lb*in**2]\na,A,1,2,3,4,,,\nb,B,2,3,4,5,1,1,1\n"


@pytest.mark.parametrize("change,field", [({"mass": 0.5}, "mass"), ({"name": "b2"}, "name"), ({"quantity": 2}, "quantity"),
                                          ({"variable": True}, "variable"), ({"inertia": None}, "inertia"),
                                          ({"cg": (0.0, 0.0, 0.0)}, "cg"), ({"density": 3.0}, "density")])
def test_a_read_back_that_differs_is_refused_at_its_csv_line(monkeypatch, change, field):
    _read_back_changed(monkeypatch, **change)
    with pytest.raises(SteelyardError) as e:
        read_csv(CSV, source="w.csv")
    text = str(e.value)
    assert "w.csv" in text and "line 3 (item 'b')" in text and "nothing was written" in text
    assert "reads back as" in text and (field in text or "column" in text)


def test_a_mass_read_back_otherwise_names_both_values(monkeypatch):
    _read_back_changed(monkeypatch, mass=0.5)
    with pytest.raises(SteelyardError) as e:
        read_csv(CSV, source="w.csv")
    # 2 lb = 2 * 0.45359237 kg (NIST SP 811, exact factor)
    assert f"reads back as 0.5, not as imported ({2 * 0.45359237!r})" in str(e.value)
    assert "column 'mass [lb]'" in str(e.value)


def test_the_column_check_holds_what_the_item_check_holds():
    # each field of each item, changed one at a time in the ledger read back, is seen (csv_same's fields)
    text = CSV
    imp = read_csv(text, source="s.csv")
    from steelyard.io.exchange.csv_import import _Columns, _new_units
    from steelyard.io.exchange.csv_read import CsvTable

    r = CsvTable(text, "s.csv", False)
    cols = _Columns(r, None, _new_units(r))
    final = imp.ledger
    assert csv_direct._same(final, r, cols)
    for change in ({"id": "z"}, {"name": "x"}, {"group": "g"}, {"quantity": 3}, {"variable": True},
                   {"mass": 9.0}, {"cg": (1.0, 2.0, 3.0)}, {"density": 1.0}, {"inertia": None},
                   {"inertia": (1.0, 1.0, 1.0, 0.0, 0.0, 1e-9)}):
        for k in range(2):
            items = list(final.items)
            (key, value), = change.items()
            if getattr(items[k], key) == value:
                continue  # no change
            items[k] = dataclasses.replace(items[k], **change)
            led = Ledger(tuple(items), final.units)
            assert not csv_direct._same(with_arrays(led, led.arrays), r, cols), (change, k)
    items = list(final.items)
    items[0] = dataclasses.replace(items[0], inertia=(0.0,) * 6)
    led = Ledger(tuple(items), final.units)
    assert not csv_direct._same(with_arrays(led, led.arrays), r, cols)  # an inertia added, even all zero


def test_columns_beyond_v1_take_the_item_path_and_the_same_bytes():
    text = CSV.replace("\n", ",density [kg/m**3]\n", 1).replace("1,1,1\n", "1,1,1,5\n").replace(",,\n", ",,,\n")
    from steelyard.io.exchange.csv_read import CsvTable

    assert not csv_direct.direct(CsvTable(text, "x.csv", False))
    written, imp = imported_text(text)
    assert imp.ledger.items[1].density == 5.0
    assert tomllib.loads(written)["item"][1]["density"] == 5.0


def test_blank_and_padded_number_cells_parse_as_the_stdlib_reads_them():
    # the joined-text reading of a sparse column against float() of each stdlib csv cell
    text = "id,mass [kg],x [m],y [m],z [m],xx [kg*m**2],yy [kg*m**2],zz [kg*m**2],xy [kg*m**2]\n" + "".join(
        f"i{k},1,0,0,0,{'' if k % 3 else '%d.5' % (k + 2)},{'' if k % 3 else 2 + k},{'' if k % 3 else 3 + k},"
        f"{'' if k % 2 or k % 3 else '-0.25'}\n" for k in range(30))
    imp = read_csv(text, source="b.csv")
    rows = list(csv.DictReader(io.StringIO(text)))
    for it, row in zip(imp.ledger.items, rows):
        cell = row["xx [kg*m**2]"]
        assert it.inertia == (None if not cell else (float(cell), float(row["yy [kg*m**2]"]),
                                                     float(row["zz [kg*m**2]"]),
                                                     float(row["xy [kg*m**2]"] or 0), 0.0, 0.0))
    assert np.isfinite(imp.ledger.arrays.own).all()
