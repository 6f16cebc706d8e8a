"""An item field of every item at once, for the exporters: C-level passes instead of a loop per item.

The exporters write 100,000 rows; a Python loop touching each item costs as much
as the formatting itself. Here each question ("which items have an own inertia",
"which have keys beyond v1") is answered for the whole ledger with map/attrgetter
and numpy, and the few rows that need more are then handled one by one.
"""

from __future__ import annotations

from itertools import repeat
from operator import attrgetter, is_not
from typing import Sequence

import numpy as np

from steelyard.core.document.model import Item, ItemArrays



def interleaved(columns: list[list], start: int, stop: int, fill=None) -> list:
    """Rows start..stop of `columns` laid out row after row (one flat list: a block's `%` values)."""
    width = len(columns)
    flat = [fill] * ((stop - start) * width)
    for j, column in enumerate(columns):
        flat[j::width] = column[start:stop]
    return flat


def field(items: Sequence[Item], key: str) -> list:
    """`item.<key>` of every item, in order."""
    return list(map(attrgetter(key), items))


def given(values: list) -> np.ndarray:
    """(n,) bool: which values are not None."""
    return np.fromiter(map(is_not, values, repeat(None)), bool, len(values))


def all_of_type(values: list, kind: type) -> bool:
    """True when every value's type is exactly `kind` (a subclass, such as bool for int, is not)."""
    return not set(map(type, values)) - {kind}


def own_rows(items: Sequence[Item]) -> np.ndarray:
    """Ascending rows of the items with an own inertia (given, or from a shape)."""
    return np.flatnonzero(given(field(items, "inertia")) | given(field(items, "shape")))


def own_at(arrays: ItemArrays, rows: np.ndarray) -> np.ndarray:
    """(k, 3, 3) own tensors of `rows`, what `arrays.own[rows]` holds, from the sparse column when
    there is one (the dense (n, 3, 3) column is not built for this)."""
    if arrays.own_rows is None:
        return arrays.own[rows]
    held, values = arrays.own_rows, arrays.own_values
    out = np.zeros((len(rows), 3, 3))
    if len(held) and len(rows):
        at = np.searchsorted(held, rows, side="right") - 1  # the last entry of a row, as dense assignment keeps
        hit = at >= 0
        hit[hit] = held[at[hit]] == rows[hit]
        out[hit] = values[at[hit]]
    return out
