"""Number cells the writer takes as they are: the texts `number` would write, byte for byte.

References, outside the code under test:
- C printf's "%.14g" (Python's %-formatting) says what a 14-digit decimal looks
  like; Python's repr is the shortest text that reads back to the same float
  (IEEE 754 binary64; float(repr(x)) == x), so a text t is the shortest spelling
  of float(t) when repr(float(t)) == t;
- the writer's one-value-at-a-time path, `toml_write.number` (itself checked
  against its full search in tests/test_toml_write_fast.py), and `write.item_lines`;
- `tomllib` reads the written ledger back; unit factors are NIST SP 811's exact ones.
"""

from __future__ import annotations

import glob
import re
import sys
import tomllib
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from steelyard.io.exchange.csv_io import check_ledger, ledger_to_csv, read_csv
from steelyard.io.ledger.file import load_ledger
from steelyard.io.ledger.toml_write import number
from steelyard.io.ledger.write import ledger_to_toml
from steelyard.io.ledger.write_given import canonical, given_texts
from steelyard.io.ledger.write_items import numbers

ROOT = Path(__file__).resolve().parents[1]
FIXTURES = [f for f in sorted(glob.glob(str(ROOT / "fixtures" / "*.toml")) +
                              glob.glob(str(ROOT / "fixtures" / "*" / "*.toml"))) if "/bad/" not in f]
sys.path.insert(0, str(ROOT / "tests" / "perf"))
from make_ledger import ledger_text  # noqa: E402

FACTORS = [0.45359237, 0.0254, 1e-3, 0.45359237 * 0.0254 ** 2, 14.593902937, 1e-9]  # lb, in, g, lb*in**2, slug
PLAIN = re.compile(r"-?(0|[1-9][0-9]*)(\.[0-9]*[1-9])?")  # what %g writes: no '+', no leading or trailing zero


def spellings(digits: int, exp: int) -> list[str]:
    """Texts of the decimal digits * 10**exp: printf's %g, repr, and forms a spreadsheet may write."""
    x = digits * 10.0 ** exp
    return [f"{x:.14g}", repr(float(f"{x:.14g}")), f"{x:.17g}", f"{x:.6f}", f"{x:.3f}0", f"+{x:.14g}" if x >= 0 else f"{x:.14g}", f"{x:.8e}",
            f"0{x:.14g}" if x >= 0 else f"{x:.14g}", f"{x:.14g}".replace("0.", ".", 1), f"{x:.0f}", f"{x:.0f}."]


@settings(max_examples=200, deadline=None, suppress_health_check=list(HealthCheck))
@given(st.lists(st.tuples(st.integers(-10**15, 10**15), st.integers(-12, 8)), min_size=1, max_size=12),
       st.sampled_from(FACTORS))
def test_given_cells_give_the_texts_number_gives(values, factor):
    texts = [t for d, e in values for t in spellings(d, e)]
    vals = np.array([float(t) for t in texts])
    xs = (vals * factor).tolist()  # the SI values an import computes from the cells
    assert numbers(xs, factor, (texts, vals)) == [number(x, factor) for x in xs]
    out, rest = given_texts(np.array(xs), factor, texts, vals)
    assert sorted(set(range(len(xs))) - set(rest.tolist())) == [k for k, t in enumerate(out) if t is not None]
    for t, x in zip(out, xs):
        if t is not None:
            assert float(t) * factor == x  # reads back exactly
            assert t.removesuffix(".0") == f"{x / factor:.14g}"  # printf's 14-digit rounding
            assert repr(float(t)) == t  # IEEE 754 shortest repr: no shorter text reads back as this float


def test_cells_as_an_export_writes_them_are_taken():
    # the fast path is taken (this test fails if it never is): %.14g texts of values in range
    texts = ["0.2766", "219.762", "-14.376", "5", "-64", "1.580002", "1000000", "0.0001234"]
    vals = np.array([float(t) for t in texts])
    out, rest = given_texts(vals * 0.45359237, 0.45359237, texts, vals)
    assert rest.size == 0
    assert out == [repr(float(t)) for t in texts]  # whole numbers get ".0", as repr writes them


@settings(max_examples=300, deadline=None)
@given(st.lists(st.text("0123456789.-e+", max_size=9), max_size=12))
def test_canonical_marks_what_printf_g_writes(texts):
    mask = canonical(texts)
    allowed = [PLAIN.fullmatch(t) is not None or t in ("", "-") for t in texts]
    if mask is None:
        assert not all(allowed)
        return
    assert all(allowed)
    assert mask.tolist() == [len(t.lstrip("-")) <= 15 for t in texts]
    for t, m in zip(texts, mask.tolist()):
        if m and t not in ("", "-", "0", "-0") and 1e-4 <= abs(float(t)) < 1e13:
            assert f"{float(t):.14g}" == t  # printf's %.14g gives the cell back


@pytest.mark.parametrize("path", FIXTURES, ids=lambda p: Path(p).name)
def test_import_writes_what_the_plain_writer_writes(path):
    for comma in (False, True):
        text = ledger_to_csv(load_ledger(path), decimal_comma=comma)
        imp = read_csv(text, source="f.csv", decimal_comma=comma)
        written = check_ledger(imp.ledger, "f.csv")  # the text the import wrote (with the CSV's cells)
        assert written == ledger_to_toml(imp.ledger)  # the writer alone, spelling every number
        assert len(tomllib.loads(written)["item"]) == len(imp.ledger.items)


def test_a_generated_ledger_imports_to_the_plain_writers_bytes(tmp_path):
    src = tmp_path / "g.toml"
    src.write_text(ledger_text(3000, seed=11))
    ledger = load_ledger(src)
    for system in (None, "si"):
        text = ledger_to_csv(ledger, system=system)
        imp = read_csv(text, source="g.csv")
        written = check_ledger(imp.ledger, "g.csv")
        assert written == ledger_to_toml(imp.ledger)
        back = tomllib.loads(written)["item"]
        f = {"lb": 0.45359237, "kg": 1.0}[imp.ledger.units.mass]
        assert [b["mass"] * f for b in back] == [it.mass for it in imp.ledger.items]


def test_texts_not_one_per_number_are_not_taken():
    out, rest = given_texts(np.array([0.0254]), 0.0254, ["1", "2"], np.array([1.0, 2.0]))
    assert out == [None] and rest.tolist() == [0]
    assert numbers([0.0254], 0.0254, (["1", "2"], np.array([1.0, 2.0]))) == [number(0.0254, 0.0254)]
