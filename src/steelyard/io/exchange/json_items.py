"""The item list of `export --json`, written in blocks of rows: the characters json.dumps(indent=2) writes.

json's indenting encoder is pure Python: for 100,000 items it costs several
times the rest of the export. Here each block of rows is one `%` format of its
rows' templates, its values put into one flat list a column at a time (slice
assignment): strings as json.dumps(ensure_ascii=False) writes them (a column
with nothing to escape goes in as it is, between quotes in the template; else
through json's C escaper, encode_basestring), floats by "%r" (float.__repr__,
as json writes them), each number formatted straight into the output. A row's
own tensor takes nine slots in its template ("null" and nine empty texts when
it has none), so no tensor text is made apart. Numpy masks find the rows that
the templates cannot write (keys beyond v1, a type other than the usual one, a
non-finite number); each of those is written on its own by the caller's
`row_text` and fills its row's slots alone. Blocks (not one text of the whole
list) let the caller encode each as it comes: no copy of a 40 MB text, and the
next block reuses the memory of the last.
"""

from __future__ import annotations

import math
import re
from bisect import bisect_left
from collections.abc import Iterator
from json.encoder import encode_basestring
from operator import not_
from itertools import compress

import numpy as np

from steelyard.core.document.model import Ledger
from steelyard.io.exchange.item_columns import all_of_type, field, given, interleaved, own_at, own_rows

#: rows per block: a block's text (about 0.4 MB) and its values stay in the processor's caches
BLOCK = 1024

#: one item as json.dumps(indent=2) writes it inside the list (level 2), up to its inertia: id, name,
#: group (each a JSON string, or its text inside quotes: `item_blocks`), mass (float), quantity (int),
#: x, y, z (floats), variable (text)
_HEAD = ('    {{\n      "id": {},\n      "name": {},\n      "group": {},\n      "mass_kg": %r,\n'
         '      "quantity": %s,\n      "cg_m": [\n        %r,\n        %r,\n        %r\n      ],\n'
         '      "variable": %s,\n      "inertia_kg_m2": ')
_ROWS = "[\n        [\n          {}\n        ],\n        [\n          {}\n        ],\n        [\n          {}\n        ]\n      ]"
#: a (3, 3) tensor at level 3, nine floats
_TENSOR = _ROWS.format(*(",\n          ".join(["%r"] * 3) for _ in range(3)))
#: a symmetric one: the diagonal floats, the off-diagonal texts each made once and given twice
_SYMMETRIC = _ROWS.format(*(",\n          ".join(r) for r in (("%r", "%s", "%s"), ("%s", "%r", "%s"),
                                                                 ("%s", "%s", "%r"))))
_NULL = "null" + "%s" * 9  # no tensor: its nine slots hold empty texts
#: row kinds (`_templates`): no own tensor, symmetric, any other, written apart
NONE, SYMMETRIC, GENERAL, APART = range(4)


def _finite(values: list) -> np.ndarray:
    """(n,) bool: the value is a Python float (exactly) and finite."""
    if all_of_type(values, float):
        return np.isfinite(np.array(values, dtype=float))
    return np.array([type(v) is float and math.isfinite(v) for v in values], dtype=bool)


#: the characters json.dumps(ensure_ascii=False) escapes in a string: the quote, the backslash, C0 controls
_ESCAPED = re.compile(r'[\x00-\x1f"\\]')


def _strings(values: list) -> tuple[list[str], bool, np.ndarray | None]:
    """(text of each value, quoted, rows that are not a str or None when all are). When no value
    holds a character json escapes, each value is its own text and `quoted` False: the row
    template puts the quotes around it; else each text is json's (encode_basestring), quotes included."""
    try:
        if not _ESCAPED.search("".join(values)):  # TypeError unless every value is a str
            return values, False, None
        return list(map(encode_basestring, values)), True, None
    except TypeError:
        odd = np.array([not isinstance(v, str) for v in values], dtype=bool)
        return [encode_basestring(v) if isinstance(v, str) else "" for v in values], True, odd


def _tensor_slots(n: int, rows: np.ndarray, own: np.ndarray) -> tuple[list[list], np.ndarray]:
    """(nine columns of n values for the tensor slots, kind of each row: NONE, SYMMETRIC or GENERAL).

    A tensor is symmetric bit for bit (-0.0 and 0.0 are written differently): its three
    off-diagonal texts are made once (float.__repr__) and each given to two "%s" slots; the
    diagonal, and every value of another tensor, is a float for a "%r" slot. Rows without a
    tensor hold empty texts."""
    kind = np.full(n, NONE, dtype=np.int8)
    k = len(rows)
    if not k:
        return [[""] * n for _ in range(9)], kind
    flat = own.reshape(k, 9)
    bits = flat.view(np.int64)
    symmetric = (bits[:, 1] == bits[:, 3]) & (bits[:, 2] == bits[:, 6]) & (bits[:, 5] == bits[:, 7])
    kind[rows] = np.where(symmetric, SYMMETRIC, GENERAL)
    values = flat.astype(object)  # Python floats, as .tolist() gives them
    sym = np.flatnonzero(symmetric)
    if len(sym):
        off = list(map(repr, flat[sym][:, [1, 2, 5]].ravel().tolist()))  # xy, xz, yz of each
        texts = np.empty(len(off), dtype=object)
        texts[:] = off
        for slot, j in ((1, 0), (3, 0), (2, 1), (6, 1), (5, 2), (7, 2)):
            values[sym, slot] = texts[j::3]
    slots = np.full((9, n), "", dtype=object)  # slot by slot: each row of this is one column
    slots[:, rows] = values.T
    return slots.tolist(), kind


def item_blocks(ledger: Ledger, variable: list, more: list[int], row_text) -> Iterator[str]:
    """The item list as json.dumps(indent=2) writes it as the value of "items" (level 1), in pieces
    whose concatenation is that text; `variable` is every item's `variable`, all bools (the caller
    checks); `more` the rows of the items with keys beyond v1 (model.more_rows). `row_text(i,
    has_own, own_i, cg_i, fraction)` writes one item the templates cannot. Everything that can
    fail (a bad key, a row written apart) runs before this returns; the pieces are only formatted."""
    items = ledger.items
    n = len(items)
    a = ledger.arrays
    fractions = _fractions(ledger, more)  # first, as before: a bad maturity or growth stops here
    plain = np.ones(n, dtype=bool)
    plain[more] = False  # keys beyond v1: more keys in the record

    names = field(items, "name")
    for i in compress(range(n), map(not_, names)):  # "name": the name, or the id when there is none
        names[i] = items[i].id
    strings, quoted = [], []
    for values in (field(items, "id"), names, field(items, "group")):
        texts, done, odd = _strings(values)
        strings.append(texts)
        quoted.append(done)
        if odd is not None:
            plain &= ~odd

    masses = field(items, "mass")
    plain &= _finite(masses)
    quantities = field(items, "quantity")
    if not all_of_type(quantities, int):
        plain &= np.array([type(q) is int for q in quantities], dtype=bool)
    cg = a.cg
    plain &= np.isfinite(cg).all(axis=1)

    rows = own_rows(items)
    own = own_at(a, rows)
    tensor, kind = _tensor_slots(n, rows, own)
    plain[rows[~np.isfinite(own.reshape(-1, 9)).all(axis=1)]] = False

    densities = field(items, "density")
    at = np.flatnonzero(given(densities)).tolist()
    columns = [*strings, masses, quantities, *(cg[:, j].tolist() for j in range(3)),
               list(map(("false", "true").__getitem__, variable)), *tensor]
    tail = ',\n      "density_kg_m3": null\n    }'  # no item gives a density: no slot for it
    if at:
        density = ["null"] * n
        values = [densities[i] for i in at]
        for i, text in zip(at, map(repr, values)):
            density[i] = text
        plain[np.array(at)[~_finite(values)]] = False
        columns.append(density)
        tail = ',\n      "density_kg_m3": %s\n    }'
    width = len(columns)
    head = _HEAD.format(*("%s" if done else '"%s"' for done in quoted))
    templates = (head + _NULL + tail, head + _SYMMETRIC + tail, head + _TENSOR + tail, "%s" * width)
    kind[~plain] = APART
    apart = {}
    if not plain.all():
        own_index = dict(zip(rows.tolist(), range(len(rows))))
        for i in np.flatnonzero(~plain).tolist():
            k = own_index.get(i)
            apart[i] = row_text(i, k is not None, None if k is None else own[k].tolist(), cg[i].tolist(), fractions[i])
    return _blocks(n, columns, list(map(templates.__getitem__, kind.tolist())), apart)


def _blocks(n: int, columns: list[list], templates: list[str], apart: dict[int, str]) -> Iterator[str]:
    """The list's text a block of rows at a time: "[\\n", the rows joined by ",\\n", "\\n  ]"."""
    width = len(columns)
    empty = [""] * (width - 1)
    rows_apart = sorted(apart)
    for start in range(0, n, BLOCK):
        stop = min(n, start + BLOCK)
        flat = interleaved(columns, start, stop, "")
        for i in rows_apart[bisect_left(rows_apart, start):bisect_left(rows_apart, stop)]:
            at = (i - start) * width
            flat[at:at + width] = [apart[i], *empty]
        yield ("[\n" if start == 0 else ",\n") + ",\n".join(templates[start:stop]) % tuple(flat)
    yield "\n  ]"


def _fractions(ledger: Ledger, more: list[int]) -> np.ndarray:
    """Growth fractions when the ledger says anything about growth (io.report.control.has_growth,
    asked of the items with keys beyond v1 only: the others hold no maturity or growth)."""
    from steelyard.core.control.growth import growth_fractions

    items = ledger.items
    if ledger.growth is not None or any(items[i].maturity is not None or items[i].growth is not None for i in more):
        return growth_fractions(ledger)
    return np.zeros(len(items))
