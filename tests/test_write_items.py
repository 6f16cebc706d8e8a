"""Item blocks with their numbers spelled a column at a time: the same bytes as `item_lines`, item by item.

Reference: the writer's own item-by-item path (`write.item_lines`, which spells
each number with `toml_write.number`, itself checked against its full search in
tests/test_toml_write_fast.py), and tomllib reading the text back (exact
arithmetic: every number reads back, times its unit's factor, to the value).
"""

from __future__ import annotations

import glob
import sys
import tomllib
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from steelyard.core.document.model import FileUnits, Item
from steelyard.core.units import unit_factor
from steelyard.io.ledger.file import load_ledger
from steelyard.io.ledger.write import item_lines, ledger_to_toml
from steelyard.io.ledger.toml_write import number
from steelyard.io.ledger.write_items import items_text, numbers

ROOT = Path(__file__).resolve().parents[1]
FIXTURES = sorted(glob.glob(str(ROOT / "fixtures" / "*.toml")) + glob.glob(str(ROOT / "fixtures" / "*" / "*.toml")))
FIXTURES = [f for f in FIXTURES if "/bad/" not in f]
sys.path.insert(0, str(ROOT / "tests" / "perf"))
from make_ledger import ledger_text  # noqa: E402

UNITS = [FileUnits(), FileUnits("lb", "in", "lb*in**2"), FileUnits("g", "mm", "g*mm**2"),
         FileUnits("oz", "ft", "slug*ft**2")]


def _one_by_one(items, u):
    return ["\n".join(item_lines(it, u)) for it in items]


@pytest.mark.parametrize("path", FIXTURES, ids=lambda p: Path(p).name)
def test_fixtures_in_every_unit_set(path):
    ledger = load_ledger(path)
    for u in [ledger.units, *UNITS]:
        assert items_text(ledger.items, u) == _one_by_one(ledger.items, u)


def test_a_generated_ledger(tmp_path):
    src = tmp_path / "g.toml"
    src.write_text(ledger_text(2000, seed=5))
    ledger = load_ledger(src)
    for u in [ledger.units, *UNITS]:
        assert items_text(ledger.items, u) == _one_by_one(ledger.items, u)
    text = ledger_to_toml(ledger)  # the whole file reads back to the same numbers
    back = tomllib.loads(text)["item"]
    f = unit_factor(ledger.units.mass, "mass")
    assert [b["mass"] * f for b in back] == [it.mass for it in ledger.items]


_FLOAT = st.one_of(st.floats(allow_nan=False, allow_infinity=False), st.floats(-1e4, 1e4),
                   st.sampled_from([0.0, -0.0, 5e-324, 1e-3, 1e13, 0.1, 2.5, 1 / 3]))


@settings(max_examples=80, deadline=None, suppress_health_check=list(HealthCheck))
@given(st.lists(st.tuples(st.floats(0, 1e9), _FLOAT, _FLOAT, _FLOAT, st.booleans(),
                          st.lists(_FLOAT, min_size=6, max_size=6)), min_size=1, max_size=10),
       st.sampled_from(UNITS))
def test_random_values_give_the_same_text(rows, u):
    items = [Item(f"i{k}", m, (x, y, z), name="n" if k % 2 else "", inertia=tuple(six) if has else None,
                  quantity=1 + k % 3, removable=bool(k % 4 == 1))
             for k, (m, x, y, z, has, six) in enumerate(rows)]
    assert items_text(items, u) == _one_by_one(items, u)


@given(st.lists(_FLOAT, max_size=20), st.sampled_from([1.0, 0.45359237, 0.0254, 1e-3, 14.593902937]))
def test_numbers_are_number_of_each(xs, factor):
    assert numbers(xs, factor) == [number(x, factor) for x in xs]


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(st.integers(-10**9, 10**9), st.integers(-300, -3)), min_size=1, max_size=30),
       st.sampled_from([0.45359237, 0.0254, 1e-3, 0.45359237 * 0.0254 ** 2, 14.593902937]))
def test_small_typed_values_are_number_of_each(digits_exp, factor):
    # values typed in the file's unit below 1e-3 (scientific notation): the column path settles them in
    # bulk; `number` runs its full search (reference: that search, candidate by candidate)
    xs = [float(f"{d}e{e}") * factor for d, e in digits_exp]
    assert numbers(xs, factor) == [number(x, factor) for x in xs]


@settings(max_examples=150, deadline=None)
@given(st.lists(st.floats(allow_nan=False, allow_infinity=False).filter(lambda x: x != 0.0), min_size=1,
                max_size=20),
       st.sampled_from([0.45359237, 0.0254, 1e-3, 0.45359237 * 0.0254 ** 2, 14.593902937, 1e-9, 1e9]))
def test_bulk_search_is_the_search_of_each(xs, factor):
    # reference: `toml_write._search`, the candidate-by-candidate search, one value at a time
    import numpy as np

    from steelyard.io.ledger.toml_write import _search
    from steelyard.io.ledger.write_items import searched

    x = np.array(xs)
    with np.errstate(all="ignore"):
        v = x / factor
    keep = np.isfinite(v)
    assert searched(x[keep], v[keep], factor) == [_search(a, a / factor, factor) for a in x[keep].tolist()]
