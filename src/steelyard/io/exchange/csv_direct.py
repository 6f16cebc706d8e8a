"""A new ledger's text straight from the CSV's columns; what it reads back as compared by column.

An import into a new file needs no Item objects to write it: the checked
columns go to the writer's own column code (write_items.columns_text), so the
text is byte for byte what `ledger_to_toml` writes for the Items the CSV
describes (tests/test_csv_direct.py). The text is then read back with the full
reader and the checks every command runs, as csv_check does, and the ledger it
reads as is compared with the CSV's columns a whole column at a time, held to
csv_same's rule (the same text, counts and flags; numbers equal or within its
few ulps). Only when a column differs are the Items built, for csv_same to
name the first item and field as it always has. A CSV with columns beyond
these (density, maturity, growth, tolerances, other) takes the Item path.
"""

from __future__ import annotations

from operator import attrgetter

import numpy as np

from steelyard.core.control.growth import growth_fractions
from steelyard.core.control.uncertainty import parse_tolerances
from steelyard.core.document.model import FileUnits, Frame, Ledger, document_of
from steelyard.core.errors import SteelyardError
from steelyard.core.limits.checks import validate
from steelyard.core.physics.inertia import COMPONENTS, six_from_tensor
from steelyard.io.exchange.csv_check import CsvPlaces, placed, remember
from steelyard.io.exchange.csv_same import _ULPS, same_items
from steelyard.io.ledger.read_stream import ledger_from_text
from steelyard.io.ledger.write import items_only_text
from steelyard.io.ledger.write_items import columns_text

#: the columns a CSV may have for this path: each is an Item field the writer's columns spell
DIRECT_COLUMNS = frozenset(("id", "name", "group", "mass", "x", "y", "z", "quantity", "variable", *COMPONENTS))


def direct(r) -> bool:
    """Whether the CSV (csv_read.CsvTable) holds only columns this path writes."""
    return set(r.index) <= DIRECT_COLUMNS


def _inertia_rows(r, cols) -> np.ndarray:
    """The rows that give an own inertia (ascending)."""
    if not any(r.has(c) for c in COMPONENTS):
        return np.zeros(0, dtype=np.intp)
    return np.flatnonzero(cols.given)


def new_ledger_text(r, cols, units: FileUnits, given: dict | None) -> str:
    """`ledger_to_toml(Ledger(tuple(_new_items(r, cols)), units), given=given)`, from the columns.

    `r`: the csv_read.CsvTable, `cols`: its csv_import._Columns (SI values, checked)."""
    n = r.n
    rows = _inertia_rows(r, cols)
    six = cols.six[rows].T.tolist() if rows.size else [[] for _ in COMPONENTS]
    texts = columns_text(
        units, r.ids, r.cols["name"] if r.has("name") else [""] * n,
        r.cols["group"] if r.has("group") else [""] * n, cols.mass.tolist(), cols.cg.T.tolist(),
        cols.quantity if cols.quantity is not None else [1] * n, rows.tolist(), six,
        cols.variable if cols.variable is not None else [False] * n, {}, given)
    return items_only_text(units, Frame(), texts)


def _close(a: np.ndarray, b: np.ndarray) -> bool:
    """Every pair equal, or within csv_same's ulps of the larger (csv_same._close, whole columns)."""
    if a.shape != b.shape:
        return False
    with np.errstate(all="ignore"):
        return bool(np.all((a == b) | (np.abs(a - b) <= _ULPS * np.spacing(np.maximum(np.abs(a), np.abs(b))))))


def _same(final: Ledger, r, cols) -> bool:
    """Whether the ledger read back holds, item for item, what the columns say (as csv_same judges):
    the texts, and where an inertia is given, from its items; the numbers from its columns (the
    reader makes both of the same values: `ItemArrays`), whole columns at a time."""
    doc = document_of(final)
    items, arrays = doc.items, doc.__dict__.get("arrays")
    n = r.n
    if len(items) != n or arrays is None or len(arrays.unit_mass) != n:
        return False
    for name, expected, default in (("id", r.ids, None), ("name", r.cols.get("name"), ""),
                                    ("group", r.cols.get("group"), ""), ("density", None, None)):
        got = list(map(attrgetter(name), items))
        same = got == expected if expected is not None else got.count(default) == n
        if not same:
            return False
    quantity = np.asarray(cols.quantity, dtype=float) if cols.quantity is not None else np.ones(n)
    variable = np.asarray(cols.variable, dtype=bool) if cols.variable is not None else np.zeros(n, bool)
    if not (np.array_equal(arrays.quantity, quantity) and np.array_equal(arrays.variable, variable)
            and _close(arrays.unit_mass, cols.mass) and _close(np.asarray(arrays.cg), cols.cg)):
        return False
    inertia = list(map(attrgetter("inertia"), items))
    rows = _inertia_rows(r, cols)
    if inertia.count(None) != n - rows.size or (rows.size and None in map(inertia.__getitem__, rows.tolist())):
        return False
    return not rows.size or _close(six_from_tensor(arrays.own[rows]), cols.six[rows])


def check_new(text: str, r, cols, source: str, places: CsvPlaces, build) -> Ledger:
    """Read `text` back as csv_check.check_ledger does and prove it holds what the columns say;
    returns the ledger read back. `build()` gives the Items (only if a column differs)."""
    try:
        final = ledger_from_text(text, source=source)
        growth_fractions(final)
        parse_tolerances(final)
        validate(final)
        if not _same(final, r, cols):
            same_items(build(), document_of(final).items)  # names the first item and field that differ
    except SteelyardError as exc:
        raise placed(exc, source, places) from None
    remember(final, text)
    return final
