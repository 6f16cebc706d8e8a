"""Hostile text and numbers through CSV export and import.

References: Python's csv module is the RFC 4180 reader the exported text is
checked with; the formula-leading characters are OWASP's CSV injection list
(= + - @ TAB CR, each such cell prefixed with a single quote); ASCII digits
only, because float() also reads PEP 515 underscores and any Unicode decimal
digit; IEEE 754 binary64 limits (2**-1074 the smallest subnormal, 1e400 above
the largest finite); masses are plain sums, checked with exact Fractions;
NIST SP 811 gives 1 lb = 0.45359237 kg.
"""

from __future__ import annotations

import csv
import io
import os
import pty
import subprocess
import sys
import unicodedata
from fractions import Fraction as F

import pytest
from hypothesis import given
from hypothesis import strategies as st

from steelyard.core.errors import SteelyardError
from steelyard.io.exchange.csv_io import ledger_to_csv, protect, read_csv, unprotect
from steelyard.io.ledger.file import load_ledger
from steelyard.io.ledger.toml_write import string
from support.cli import run_process
from support.units import LB

OWASP_LEAD = ("=", "+", "-", "@", "\t", "\r")  # OWASP CSV injection: characters that start a formula


def ledger_file(tmp_path, items: list[tuple[str, str, str, float]], name="l.toml"):
    """A ledger in lb / in with items (id, name, group, mass)."""
    lines = ['steelyard = 1', '[units]', 'mass = "lb"', 'length = "in"']
    for ident, nm, group, mass in items:
        lines += ["[[item]]", f"id = {string(ident)}", f"name = {string(nm)}", f"group = {string(group)}",
                  f"mass = {mass}", "cg = [100, 0, 0]"]
    path = tmp_path / name
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def rows(text: str) -> list[list[str]]:
    return list(csv.reader(io.StringIO(text, newline="")))  # the reference RFC 4180 reader


# ---------------------------------------------------------------- B: text is kept verbatim

def test_trailing_space_id_merges_into_itself(tmp_path):
    path = ledger_file(tmp_path, [("a", "first", "", 5), ("b ", "  spaced  name ", " g /x ", 15)])
    ledger = load_ledger(path)
    imp = read_csv(ledger_to_csv(ledger), source="x.csv", into=ledger)
    assert imp.added == () and imp.replaced == ()  # nothing appended: 'b ' is still 'b '
    assert [it.id for it in imp.ledger.items] == ["a", "b "]
    assert [it.name for it in imp.ledger.items] == ["first", "  spaced  name "]
    assert imp.ledger.items[1].group == " g /x "
    assert sum(it.mass for it in imp.ledger.items) == pytest.approx(float(20 * LB), rel=1e-15)  # 5 + 15 lb


def test_trailing_space_id_round_trip_through_the_cli(tmp_path):
    path = ledger_file(tmp_path, [("a", "A", "", 5), ("b ", "B", "", 15)])
    out_csv, merged = tmp_path / "x.csv", tmp_path / "m.toml"
    assert run_process("export", path, "--csv", out_csv).returncode == 0
    r = run_process("import", out_csv, "-o", merged, "--into", path)
    assert r.returncode == 0, r.stderr
    back = load_ledger(merged)
    assert [it.id for it in back.items] == ["a", "b "]
    assert sum(it.mass for it in back.items) == pytest.approx(float(20 * LB), rel=1e-15)


def test_an_id_a_spreadsheet_trimmed_is_refused_not_added(tmp_path):
    ledger = load_ledger(ledger_file(tmp_path, [("a", "A", "", 5), ("b ", "B", "", 15)]))
    with pytest.raises(SteelyardError) as err:
        read_csv("id,mass [lb],x [in],y [in],z [in]\nb,15,100,0,0\n", source="t.csv", into=ledger)
    text = str(err.value)
    assert "line 2" in text and "column 'id'" in text and "spaces" in text, text


def test_cells_with_edge_spaces_are_quoted_and_read_back_by_a_reference_reader(tmp_path):
    ledger = load_ledger(ledger_file(tmp_path, [("b ", " lead", "", 1)]))
    text = ledger_to_csv(ledger)
    assert '"b "," lead"' in text
    assert rows(text)[1][:2] == ["b ", " lead"]


# ---------------------------------------------------------------- C: formulas and terminals

HOSTILE = ["=HYPERLINK(\"http://x\",\"y\")", "@SUM(1+1)", "+1", "-x", "\tlead tab", "\rlead cr", "'=x", "''@y",
           "'quoted'", "'", "=", "plain", "a=b", "x\x1b[31m\x07", "semi;colon", "comma, here", "quote\"in"]


def test_formula_cells_get_a_quote_and_come_back_as_they_were(tmp_path):
    items = [(f"id{k}{t}", t, t + "/g", 1) for k, t in enumerate(HOSTILE)]
    items[0] = ("=cmd|' /C calc'!A0", HOSTILE[0], "@g", 1)
    ledger = load_ledger(ledger_file(tmp_path, items))
    text = ledger_to_csv(ledger)
    for row in rows(text)[1:]:
        for cell in row[:3]:  # id, name, group as a spreadsheet would see them
            assert not cell.startswith(OWASP_LEAD), cell  # OWASP: never a formula-leading cell
    back = read_csv(text, source="h.csv").ledger
    assert [(it.id, it.name, it.group) for it in back.items] == [(it.id, it.name, it.group) for it in ledger.items]


@given(st.text())
def test_protect_is_reversible_and_never_leaves_a_formula_lead(text):
    cell = protect(text)
    assert unprotect(cell) == text
    assert not cell.startswith(OWASP_LEAD)


def test_numbers_are_not_prefixed(tmp_path):
    path = tmp_path / "n.toml"
    path.write_text('steelyard = 1\n[units]\nmass = "lb"\nlength = "in"\n[[item]]\nid = "n"\nmass = 2\n'
                    'cg = [-84, -0.5, 0]\n')
    text = ledger_to_csv(load_ledger(path))
    assert rows(text)[1][3:7] == ["2", "-84", "-0.5", "0"]  # numbers the program wrote: never a formula
    assert read_csv(text, source="n.csv").ledger.items[0].cg[0] == float(-84 * F("0.0254"))  # NIST SP 811


def test_csv_on_a_terminal_shows_control_characters_as_symbols(tmp_path):
    path = ledger_file(tmp_path, [("a", "x\x1b[2J\x07bell\rback", "", 1)])
    master, slave = pty.openpty()
    proc = subprocess.Popen([sys.executable, "-m", "steelyard", "export", str(path), "--csv", "-"],
                            stdout=slave, stderr=subprocess.PIPE)
    os.close(slave)
    out = b""
    while True:
        try:
            chunk = os.read(master, 65536)
        except OSError:  # EIO: the child closed its end
            break
        if not chunk:
            break
        out += chunk
    os.close(master)
    assert proc.wait() == 0
    shown = out.decode("utf-8").replace("\r\n", "\n")  # the terminal's own line discipline adds CR before LF
    assert "\x1b" not in shown and "\x07" not in shown and "\r" not in shown, shown
    assert "\u241b" in shown and "\u2407" in shown and "\u240d" in shown  # control pictures ␛ ␇ ␍


def test_csv_to_a_pipe_keeps_the_bytes(tmp_path):
    path = ledger_file(tmp_path, [("a", "x\x1bname", "", 1)])
    r = run_process("export", path, "--csv", "-")
    assert r.returncode == 0 and rows(r.stdout)[1][1] == "x\x1bname"


# ---------------------------------------------------------------- D: what a CSV can and cannot carry

def test_carriage_return_in_an_id_is_quoted_and_imports(tmp_path):
    ledger = load_ledger(ledger_file(tmp_path, [("c\r", "C", "", 1), ("d\nx", "D", "", 2)]))
    text = ledger_to_csv(ledger)
    assert [r[0] for r in rows(text)[1:]] == ["c\r", "d\nx"]  # RFC 4180: CR and LF inside quotes
    imp = read_csv(text, source="cr.csv", into=ledger)
    assert imp.added == () and [it.id for it in imp.ledger.items] == ["c\r", "d\nx"]


def test_nul_in_an_id_stops_the_export_before_a_file_is_written(tmp_path):
    path = ledger_file(tmp_path, [("ok", "A", "", 1), ("d\x00x", "B", "", 1)])
    out = tmp_path / "x.csv"
    r = run_process("export", path, "--csv", out)
    assert r.returncode == 2 and r.stderr.count("\n") == 1, r.stderr
    assert "NUL" in r.stderr and "id" in r.stderr
    assert not out.exists()


def test_cg_table_on_a_fixed_item_is_refused_at_its_line_and_column(tmp_path):
    bad = tmp_path / "t.csv"
    bad.write_text('id,mass [kg],x [m],y [m],z [m],variable,other\nok,1,0,0,0,false,\n'
                   't,5,1,2,3,false,"{ cg_table = [[0.5, 1, 2, 3], [1.0, 1, 2, 3]] }"\n')
    out = tmp_path / "new.toml"
    r = run_process("import", bad, "-o", out)
    assert r.returncode == 2, r.stdout
    assert "line 3" in r.stderr and "column 'other'" in r.stderr and "variable" in r.stderr, r.stderr
    assert not out.exists()


def test_a_group_too_deep_is_refused_at_its_line_and_column():
    deep = "/".join(["g"] * 65)
    with pytest.raises(SteelyardError) as err:
        read_csv(f"id,mass [kg],x [m],y [m],z [m],group\na,1,0,0,0,ok\nb,1,0,0,0,{deep}\n", source="g.csv")
    assert "line 3" in str(err.value) and "column 'group'" in str(err.value) and "65" in str(err.value)


# ---------------------------------------------------------------- E: number cells

@pytest.mark.parametrize("cell,words", [
    ("1_5", "ASCII"),  # float() reads 15 (PEP 515)
    (unicodedata.lookup("ARABIC-INDIC DIGIT ONE") + unicodedata.lookup("ARABIC-INDIC DIGIT TWO"), "ASCII"),
    (unicodedata.lookup("FULLWIDTH DIGIT ONE") + unicodedata.lookup("FULLWIDTH DIGIT TWO"), "ASCII"),
    ("1e-400", "too small"),  # float() reads 0.0 (below 2**-1074)
    ("1e400", "too large"),  # float() reads inf
    ("-1e-400", "too small"),
    ("infinity", "finite"),
])
def test_number_cells_are_ascii_decimals_that_a_float_can_hold(cell, words):
    text = f"id,mass [kg],x [m],y [m],z [m]\nok,1,0,0,0\nbad,{cell},0,0,0\n"
    with pytest.raises(SteelyardError) as err:
        read_csv(text, source="n.csv")
    msg = str(err.value)
    assert "line 3" in msg and "column 'mass [kg]'" in msg and words in msg, msg


def test_a_cell_that_overflows_only_in_si_is_refused():
    # 1e306 t = 1e309 kg: finite in tonnes, beyond the largest double in kg
    with pytest.raises(SteelyardError, match="too large"):
        read_csv("id,mass [t],x [m],y [m],z [m]\na,1e306,0,0,0\n", source="t.csv")


def test_decimal_comma_cells_are_strict_too():
    with pytest.raises(SteelyardError, match="ASCII"):
        read_csv("id;mass [kg];x [m];y [m];z [m]\na;1_5;0;0;0\n", source="c.csv", decimal_comma=True)
    ok = read_csv("id;mass [kg];x [m];y [m];z [m]\na; 1,5 ;0;0;0\n", source="c.csv", decimal_comma=True)
    assert ok.ledger.items[0].mass == 1.5


def test_the_smallest_subnormal_is_a_number_and_is_kept():
    led = read_csv("id,mass [kg],x [m],y [m],z [m]\na,5e-324,0,0,0\nb,0e-400,0,0,0\n", source="s.csv").ledger
    assert led.items[0].mass == 2.0 ** -1074  # IEEE 754 binary64 smallest subnormal
    assert led.items[1].mass == 0.0  # a zero written with a big exponent is still zero
