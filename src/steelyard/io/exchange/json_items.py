"""The item list of `export --json`, written a column at a time: the characters json.dumps(indent=2) writes.

json's indenting encoder is pure Python: for 100,000 items it costs several
times the rest of the export. Here each field is turned into JSON text for every
item at once (the C string escaper json.encoder.encode_basestring, float.__repr__
as json writes floats, mapped in C) and the rows are laid out by one `%` format
of a fixed row template. Numpy masks find the rows that template cannot write
(keys beyond v1, a type other than the usual one, a non-finite number); only
those are written one by one, by `row_text`, as before.
"""

from __future__ import annotations

import math
from itertools import chain, compress
from json.encoder import encode_basestring
from operator import not_

import numpy as np

from steelyard.core.document.model import Ledger
from steelyard.io.exchange.item_columns import all_of_type, field, given, more_rows, own_at, own_rows

#: one item as json.dumps(indent=2) writes it inside the list (level 2): id, name, group, mass, quantity,
#: x, y, z, variable, inertia (null or `_TENSOR`) and density (null or a number)
_ROW = ('    {\n      "id": %s,\n      "name": %s,\n      "group": %s,\n      "mass_kg": %s,\n      "quantity": %s,\n'
        '      "cg_m": [\n        %s,\n        %s,\n        %s\n      ],\n      "variable": %s,\n'
        '      "inertia_kg_m2": %s,\n      "density_kg_m3": %s\n    }')
_TENSOR = "[\n" + ",\n".join("        [\n" + ",\n".join(["          %s"] * 3) + "\n        ]" for _ in range(3)) + "\n      ]"


def _reprs(values: list) -> list[str]:
    """float.__repr__ of each value, the text json writes for a float (any other value gets its repr:
    such a row is not written by the template)."""
    return list(map(repr, values))


def _finite(values: list) -> np.ndarray:
    """(n,) bool: the value is a Python float (exactly) and finite."""
    if all_of_type(values, float):
        return np.isfinite(np.array(values, dtype=float))
    return np.array([type(v) is float and math.isfinite(v) for v in values], dtype=bool)


def _strings(values: list) -> tuple[list[str], np.ndarray | None]:
    """(JSON text of each value, rows that are not an exact str or None when all are)."""
    if all_of_type(values, str):
        return list(map(encode_basestring, values)), None
    odd = np.array([type(v) is not str for v in values], dtype=bool)
    return [encode_basestring(v) if type(v) is str else "" for v in values], odd


def _tensors(rows_own: np.ndarray) -> tuple[list[str], np.ndarray]:
    """(JSON text of each (3, 3) tensor laid out as json indents it at level 3, finite mask)."""
    k = len(rows_own)
    flat = rows_own.reshape(k, 9)
    texts = _reprs(flat.ravel().tolist())
    return ("\x00".join([_TENSOR] * k) % tuple(texts)).split("\x00") if k else [], np.isfinite(flat).all(axis=1)


def items_text(ledger: Ledger, row_text) -> str:
    """The item list as json.dumps(indent=2) writes it as the value of "items" (level 1), every
    item a variable that is a bool (the caller checks). `row_text(i, has_own, own_i, cg_i, fraction)`
    writes one item the template cannot."""
    items = ledger.items
    n = len(items)
    a = ledger.arrays
    more = more_rows(items)
    fractions = _fractions(ledger, more)  # first, as before: a bad maturity or growth stops here
    plain = np.ones(n, dtype=bool)
    plain[more] = False  # keys beyond v1: more keys in the record

    ids, odd = _strings(field(items, "id"))
    if odd is not None:
        plain &= ~odd
    names = field(items, "name")
    for i in compress(range(n), map(not_, names)):  # "name": the name, or the id when there is none
        names[i] = items[i].id
    names, odd = _strings(names)
    if odd is not None:
        plain &= ~odd
    groups, odd = _strings(field(items, "group"))
    if odd is not None:
        plain &= ~odd

    masses = field(items, "mass")
    plain &= _finite(masses)
    quantities = field(items, "quantity")
    if not all_of_type(quantities, int):
        plain &= np.array([type(q) is int for q in quantities], dtype=bool)
    cg = a.cg
    plain &= np.isfinite(cg).all(axis=1)
    variable = ["true" if v else "false" for v in field(items, "variable")]

    inertia = ["null"] * n
    rows = own_rows(items)
    own = own_at(a, rows)
    texts, finite = _tensors(own)
    for r, text in zip(rows.tolist(), texts):
        inertia[r] = text
    plain[rows[~finite]] = False

    densities = field(items, "density")
    density = ["null"] * n
    at = np.flatnonzero(given(densities)).tolist()
    if at:
        values = [densities[i] for i in at]
        for i, text in zip(at, _reprs(values)):
            density[i] = text
        plain[np.array(at)[~_finite(values)]] = False

    columns = [ids, names, groups, _reprs(masses), list(map(str, quantities)),
               *(_reprs(cg[:, j].tolist()) for j in range(3)), variable, inertia, density]
    args = list(zip(*columns))
    template = [_ROW] * n
    others = np.flatnonzero(~plain).tolist()
    if others:
        cg_rows = cg[others].tolist()
        own_index = dict(zip(rows.tolist(), range(len(rows))))
        for i, cg_i in zip(others, cg_rows):
            k = own_index.get(i)
            template[i] = "%s"
            args[i] = (row_text(i, k is not None, None if k is None else own[k].tolist(), cg_i, fractions[i]),)
    return "[\n" + ",\n".join(template) % tuple(chain.from_iterable(args)) + "\n  ]"


def _fractions(ledger: Ledger, more: list[int]) -> np.ndarray:
    """Growth fractions when the ledger says anything about growth (io.report.control.has_growth,
    asked of the items with keys beyond v1 only: the others hold no maturity or growth)."""
    from steelyard.core.control.growth import growth_fractions

    items = ledger.items
    if ledger.growth is not None or any(items[i].maturity is not None or items[i].growth is not None for i in more):
        return growth_fractions(ledger)
    return np.zeros(len(items))
