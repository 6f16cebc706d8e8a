"""A plain CSV cut with str.split: the cells, lines and errors of the record-by-record reading.

Reference: Python's stdlib `csv` module (the RFC 4180 reader, excel dialect) reads
the same text; its non-blank records, padded to the header's width, must be the
columns the fast cut gives, line for line. And the table built with the fast cut
switched off (the csv module's path) must be the same in every attribute.
"""

from __future__ import annotations

import csv
import io
import re

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from steelyard.core.errors import SteelyardError
from steelyard.io.exchange import csv_read
from steelyard.io.exchange.csv_read import CsvTable

HEADER = ["id", "name", "mass [lb]", "x [in]", "y [in]", "z [in]"]


def reference(text: str, sep: str) -> tuple[list[list[str]], list[int]]:
    """Columns (header's width, as read by the csv module, blank records skipped) and line numbers."""
    records = list(csv.reader(io.StringIO(text, newline=""), delimiter=sep))  # one record per line here
    rows = [(k + 1, r) for k, r in enumerate(records) if "".join(r).strip()]
    width = len(rows[0][1])
    body = [r + [""] * (width - len(r)) for _, r in rows[1:]]
    return [list(c) for c in zip(*body)], [k for k, _ in rows[1:]]


def slow(text: str, monkeypatch) -> CsvTable:
    with monkeypatch.context() as m:
        m.setattr(CsvTable, "_split_plain", lambda self, text, sep: None)
        return CsvTable(text, "t.csv", False)


def same(a: CsvTable, b: CsvTable) -> None:
    assert (a.cols, a.lines, a.n, a.header, a.header_line, a.labels, a.units) == \
           (b.cols, b.lines, b.n, b.header, b.header_line, b.labels, b.units)


# cells with what the cut must keep as it is: spaces, tabs, form feeds, U+2028, apostrophes, '=' leads
_CELL = st.text(st.sampled_from(list("ab1.5 -=\t\x0b\x0c\u2028'é")), max_size=6)


@settings(max_examples=150, deadline=None, suppress_health_check=list(HealthCheck))
@given(rows=st.lists(st.tuples(st.text(st.sampled_from("pq7 _"), min_size=1, max_size=5).filter(str.strip),
                          _CELL, st.sampled_from(["1", " 2.5", "0.25 ", "-3"]), st.sampled_from(["1", "1e2"])),
                min_size=1, max_size=8),
       sep=st.sampled_from([",", ";", "\t"]), final_break=st.booleans())
def test_plain_text_is_cut_as_the_csv_module_reads_it(rows, sep, final_break, monkeypatch):
    if sep == "\t":
        rows = [(i.replace("\t", " "), n.replace("\t", " "), m, x) for i, n, m, x in rows]
    lines = [sep.join(HEADER)] + [sep.join([i, n, m, x, "0", "0"]) for i, n, m, x in rows]
    text = "\n".join(lines) + ("\n" if final_break else "")
    calls = []
    real = CsvTable._split_plain
    with monkeypatch.context() as m:
        m.setattr(CsvTable, "_split_plain", lambda self, t, s: calls.append(real(self, t, s)) or calls[-1])
        fast = CsvTable(text, "t.csv", False)
    assert calls and calls[0] is not None  # the plain text took the fast cut
    columns, line_numbers = reference(text, sep)
    assert fast.lines == line_numbers
    assert fast.cols["id"] == columns[0]
    # a text cell loses one leading apostrophe where the exporter adds one: before = + - @ TAB CR (OWASP)
    assert fast.cols["name"] == [c[1:] if re.match(r"'+[=+\-@\t\r]", c) else c for c in columns[1]]
    assert fast.cols["mass"] == [c.strip() for c in columns[2]]
    same(fast, slow(text, monkeypatch))


@pytest.mark.parametrize("text", [
    "id,mass [lb],x [in],y [in],z [in]\na,1,2,3,4\n\nb,1,2,3,4\n",  # a blank line
    "id,mass [lb],x [in],y [in],z [in]\na,1,2,3,4\n,,,,\nb,1,2,3,4\n",  # a line of separators only
    "id,mass [lb],x [in],y [in],z [in]\na,1,2,3\nb,1,2,3,4\n",  # a short row: padded
    "id,mass [lb],x [in],y [in],z [in]\na,1,2,3,4,\nb,1,2,3,4\n",  # a trailing empty cell
    "id,mass [lb],x [in],y [in],z [in]\na,1,2,3\nb,1,2,3,4,\n",  # one cell short, then one over: as many cells
    "id,mass [lb],x [in],y [in],z [in]\n \t,1,2,3,4\nb,1,2,3,4\n",  # a blank id
    "\nid,mass [lb],x [in],y [in],z [in]\na,1,2,3,4\n",  # the header on line 2
    "id,mass [lb],x [in],y [in],z [in]\r\na,1,2,3,4\r\n",  # CRLF
    'id,name,mass [lb],x [in],y [in],z [in]\na,"x, y",1,2,3,4\n',  # quotes
    "id,mass [lb],x [in],y [in],z [in]\na,1,2,3,4\x01\n",  # the cut's own mark
    "id,mass [lb],x [in],y [in],z [in]\na,1,2,3,4",  # no final line break
    "id,mass [lb],x [in],y [in],z [in]\na,1,2,3,4\n\n",  # a blank line at the end
])
def test_texts_the_cut_passes_on_read_as_before(text, monkeypatch):
    try:
        fast = CsvTable(text, "t.csv", False)
    except SteelyardError as exc:
        with pytest.raises(SteelyardError) as ref:
            slow(text, monkeypatch)
        assert str(ref.value) == str(exc)
        return
    same(fast, slow(text, monkeypatch))
    sep = ","
    columns, line_numbers = reference(text.replace("\r\n", "\n"), sep) if '"' not in text else reference(text, sep)
    assert fast.lines == line_numbers
    assert fast.cols["id"] == columns[0]


@pytest.mark.parametrize("text, words", [
    ("id,mass [lb],x [in],y [in],z [in]\n", "no item rows"),
    ("id,mass [lb],x [in],y [in],z [in],bogus\na,1,2,3,4,5\n", "unknown column"),
    ("id,mass [lb],x [in],y [in]\na,1,2,3\n", "missing column 'z'"),
    ("id,mass [lb],x [in],y [in],z [in]\na,1,2,3,4,5\n", "has 6 cells"),
])
def test_errors_are_the_record_by_record_errors(text, words, monkeypatch):
    with pytest.raises(SteelyardError) as fast:
        CsvTable(text, "t.csv", False)
    with pytest.raises(SteelyardError) as ref:
        slow(text, monkeypatch)
    assert str(fast.value) == str(ref.value) and words in str(fast.value)


def test_first_line_of_a_long_text_is_splitlines_first_non_blank():
    # reference: str.splitlines over the whole text
    pad = "\n" * 70000 + " ;\n"
    for text in (pad + "id,mass [kg]\n", "id;mass [kg]\n" + "x\n" * 70000, "a\u2028b\n" * 40000):
        assert csv_read._first_line(text) == next(s for s in text.splitlines() if s.strip(" \t,;"))
