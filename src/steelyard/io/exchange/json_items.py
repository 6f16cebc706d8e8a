"""The item list of `export --json`, written a column at a time: the characters json.dumps(indent=2) writes.

json's indenting encoder is pure Python: for 100,000 items it costs several
times the rest of the export. Here the whole list is one `%` format of a row
template repeated, its values put into one flat tuple a column at a time
(slice assignment): strings as json.dumps(ensure_ascii=False) writes them (a
column with nothing to escape goes in as it is, between quotes in the
template; else through json's C escaper, encode_basestring), floats by "%r"
(float.__repr__, as json writes them). Numpy masks find the rows that template cannot write
(keys beyond v1, a type other than the usual one, a non-finite number); each
of those is written on its own by the caller's `row_text` and takes the
template "%s" followed by "%.0s" for the values it does not show.
"""

from __future__ import annotations

import math
import re
from json.encoder import encode_basestring
from operator import not_
from itertools import compress

import numpy as np

from steelyard.core.document.model import Ledger
from steelyard.io.exchange.item_columns import all_of_type, field, given, own_at, own_rows

#: one item as json.dumps(indent=2) writes it inside the list (level 2): id, name, group (each JSON
#: string, or its text inside quotes, `_row`), mass (float), quantity (int), x, y, z (floats), variable,
#: inertia (null or `_TENSOR`'s text), density (text)
_ROW = ('    {{\n      "id": {},\n      "name": {},\n      "group": {},\n      "mass_kg": %r,\n      "quantity": %s,\n'
        '      "cg_m": [\n        %r,\n        %r,\n        %r\n      ],\n      "variable": %s,\n'
        '      "inertia_kg_m2": %s,\n      "density_kg_m3": %s\n    }}')
_WIDTH = 11
_OTHER = "%s" + "%.0s" * (_WIDTH - 1)  # a row written apart: its text, the other values not shown
_ROWS = "[\n        [\n          {}\n        ],\n        [\n          {}\n        ],\n        [\n          {}\n        ]\n      ]"
#: a (3, 3) tensor at level 3; a symmetric one takes 6 values (xx, xy, xz, yy, yz, zz), the
#: off-diagonal texts each given once as a string and written twice
_SYMMETRIC = _ROWS.format(*(",\n          ".join(r) for r in (("%r", "%s", "%s"), ("%s", "%r", "%s"),
                                                                 ("%s", "%s", "%r"))))
_TENSOR = _ROWS.format(*(",\n          ".join(["%r"] * 3) for _ in range(3)))


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


def _tensors(own: np.ndarray) -> list[str]:
    """JSON text of each (3, 3) tensor as json.dumps(indent=2) lays it out at level 3. A symmetric
    one (bit for bit: -0.0 and 0.0 are written differently) has its three off-diagonal texts made once."""
    k = len(own)
    out = [""] * k
    if not k:
        return out
    flat = own.reshape(k, 9)
    bits = flat.view(np.int64)
    symmetric = (bits[:, 1] == bits[:, 3]) & (bits[:, 2] == bits[:, 6]) & (bits[:, 5] == bits[:, 7])
    sym = np.flatnonzero(symmetric)
    if len(sym):
        s = flat[sym]
        off = list(map(repr, s[:, [1, 2, 5]].ravel().tolist()))  # xy, xz, yz of each
        xy, xz, yz = off[0::3], off[1::3], off[2::3]
        args = [None] * (9 * len(sym))
        for j, column in enumerate((s[:, 0].tolist(), xy, xz, xy, s[:, 4].tolist(), yz, xz, yz, s[:, 8].tolist())):
            args[j::9] = column
        texts = ("\x00".join([_SYMMETRIC] * len(sym)) % tuple(args)).split("\x00")
        for r, text in zip(sym.tolist(), texts):
            out[r] = text
    for r in np.flatnonzero(~symmetric).tolist():
        out[r] = _TENSOR % tuple(flat[r].tolist())
    return out


def items_text(ledger: Ledger, variable: list, more: list[int], row_text) -> str:
    """The item list as json.dumps(indent=2) writes it as the value of "items" (level 1); `variable`
    is every item's `variable`, all bools (the caller checks); `more` the rows of the items with keys
    beyond v1 (item_columns.more_rows). `row_text(i, has_own, own_i, cg_i, fraction)` writes one
    item the template cannot."""
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

    inertia = ["null"] * n
    rows = own_rows(items)
    own = own_at(a, rows)
    for r, text in zip(rows.tolist(), _tensors(own)):
        inertia[r] = text
    plain[rows[~np.isfinite(own.reshape(-1, 9)).all(axis=1)]] = False

    densities = field(items, "density")
    density = ["null"] * n
    at = np.flatnonzero(given(densities)).tolist()
    if at:
        values = [densities[i] for i in at]
        for i, text in zip(at, map(repr, values)):
            density[i] = text
        plain[np.array(at)[~_finite(values)]] = False

    columns = [*strings, masses, quantities, *(cg[:, j].tolist() for j in range(3)),
               list(map(("false", "true").__getitem__, variable)), inertia, density]
    flat = [None] * (n * _WIDTH)
    for j, column in enumerate(columns):
        flat[j::_WIDTH] = column
    templates = [_ROW.format(*("%s" if done else '"%s"' for done in quoted))] * n
    others = np.flatnonzero(~plain).tolist()
    if others:
        own_index = dict(zip(rows.tolist(), range(len(rows))))
        for i, cg_i in zip(others, cg[others].tolist()):
            k = own_index.get(i)
            templates[i] = _OTHER
            flat[i * _WIDTH] = row_text(i, k is not None, None if k is None else own[k].tolist(), cg_i, fractions[i])
    return "[\n" + ",\n".join(templates) % tuple(flat) + "\n  ]"


def _fractions(ledger: Ledger, more: list[int]) -> np.ndarray:
    """Growth fractions when the ledger says anything about growth (io.report.control.has_growth,
    asked of the items with keys beyond v1 only: the others hold no maturity or growth)."""
    from steelyard.core.control.growth import growth_fractions

    items = ledger.items
    if ledger.growth is not None or any(items[i].maturity is not None or items[i].growth is not None for i in more):
        return growth_fractions(ledger)
    return np.zeros(len(items))
