"""The [[item]] array in column passes, for the common case of a regular file.

`ItemsReader` reads item by item, so its first error is the first problem in
file order. Here every check is a pass over a whole column (the loops run
in C: `map` over `dict.get`, type sets, numpy); when everything is regular,
the items are made in bulk (core.document.model.items_from_columns). At the
first irregularity — a value written with a unit, a wrong type, any
error — this gives up (None) and the item-by-item reader runs instead,
which says what the file means and words the first error. So this path
changes speed, never meaning.
"""

from __future__ import annotations

from itertools import chain, compress, repeat
from operator import not_

import numpy as np

from steelyard.core.document.model import NO_UNITS, ItemArrays, items_from_columns, items_replaced, sparse_own
from steelyard.core.errors import SteelyardError
from steelyard.core.physics.groups import group_depth_problem
from steelyard.core.physics.inertia import realisability_problems, tensor_from_six
from steelyard.core.physics.rotation import rotation_matrix
from steelyard.core.units import unit_factor

#: keys every row may have on this path; rows with others are read one at a time (still here)
_PLAIN = frozenset({"id", "name", "group", "mass", "cg", "quantity", "variable", "inertia"})
_NUMBERS = {float, int}
_LOADED = {"loaded"}
_SCALARS = frozenset({float, int, str, bool})


def _column(raw: list, key: str, default=None) -> list:
    return list(map(dict.get, raw, repeat(key), repeat(default)))


def _types(values) -> set:
    return set(map(type, values))


def read_fast(reader) -> tuple[list, ItemArrays] | None:
    """(items, columns) of `reader.raw`, or None to let the item-by-item reader decide."""
    try:
        return _read(reader)
    except (SteelyardError, OverflowError, ValueError, TypeError, KeyError, FloatingPointError):
        return None


def _read(reader) -> tuple[list, ItemArrays] | None:
    raw = reader.raw
    n = len(raw)
    if n == 0 or _types(raw) != {dict}:
        return None
    u = reader.units
    ids = _column(raw, "id")
    if _types(ids) != {str} or not all(map(str.strip, ids)):
        return None
    seen = reader.seen
    if len(set(ids)) != n or not seen.keys().isdisjoint(ids):  # a repeated id: the item-by-item reader names it
        return None
    masses = _column(raw, "mass")
    if not _types(masses) <= _NUMBERS:
        return None
    cgs = _column(raw, "cg")
    if _types(cgs) != {list} or set(map(len, cgs)) != {3} or not _types(chain.from_iterable(cgs)) <= _NUMBERS:
        return None
    qs = _column(raw, "quantity", 1)
    if _types(qs) != {int}:
        return None
    var = _column(raw, "variable", False)
    if _types(var) != {bool}:
        return None
    names = _column(raw, "name", "")
    groups = _column(raw, "group", "")
    if _types(names) != {str} or _types(groups) != {str}:
        return None
    if any(group_depth_problem(g) for g in set(groups) if "/" in g):
        return None
    with np.errstate(over="raise", invalid="raise"):
        mass = np.array(masses, dtype=float) * unit_factor(u.mass, "mass")
        cg = np.array(cgs, dtype=float).reshape(n, 3) * unit_factor(u.length, "length")
    quantity = np.array(qs, dtype=float)
    if not (np.all(np.isfinite(mass)) and np.all(mass >= 0) and np.all(np.isfinite(cg))
            and np.all(quantity >= 1) and np.all(quantity < 2.0 ** 53)):
        return None
    own = np.zeros((n, 3, 3))
    has = list(map(dict.__contains__, raw, repeat("inertia")))
    rows = list(compress(range(n), has))
    if rows:
        inertia = _inertia(reader, list(map(dict.get, compress(raw, has), repeat("inertia"))), rows, own)
        if inertia is None:
            return None
    else:
        inertia = [None] * n
    odd = list(compress(range(n), map(not_, map(_PLAIN.issuperset, raw))))
    columns = {"id": ids, "mass": mass.tolist(), "cg": list(map(tuple, cg.tolist())), "name": names,
               "group": groups, "quantity": qs, "inertia": inertia, "variable": var}
    items = items_from_columns(n, columns, given_units=NO_UNITS)
    odd = _marked(raw, odd, items)
    for i in odd:
        items[i] = _odd_row(reader, i, items[i], own)
    seen.update(zip(ids, range(len(seen), len(seen) + n)))
    cg = np.asfortranarray(cg)
    rows, values = sparse_own(own)
    return items, ItemArrays.sparse(mass, quantity, cg, np.array(var, dtype=bool), rows, values)


def _marked(raw: list, odd: list[int], items: list) -> list[int]:
    """The odd rows left after those whose only key beyond the plain ones is a snapshot's `loaded`
    marker, a table of plain values (type-checked here as `ItemsReader._more` does; its meaning is
    checked in core.history.diff): those are set in bulk. A snapshot marks every load item so."""
    rows = [i for i in odd if raw[i].keys() - _PLAIN == _LOADED]
    marks = [raw[i]["loaded"] for i in rows]
    ok = [type(v) is dict and _SCALARS.issuperset(map(type, v.values())) for v in marks]
    rows = list(compress(rows, ok))
    if not rows:
        return odd
    marks = list(compress(marks, ok))
    for i, item in zip(rows, items_replaced([items[i] for i in rows], {"loaded": marks})):
        items[i] = item
    done = set(rows)
    return [i for i in odd if i not in done]


def _inertia(reader, tables: list, rows: list, own: np.ndarray) -> list | None:
    """The inertia column (six, SI, None where not given) of bare-number tables at `rows`, their tensors
    into `own`; None if any table is not one of those."""
    from steelyard.core.physics.inertia import COMPONENTS

    keys = frozenset(COMPONENTS)
    if _types(tables) != {dict} or not all(map(keys.issuperset, tables)):
        return None
    if not all(all(map(dict.__contains__, tables, repeat(k))) for k in ("xx", "yy", "zz")):
        return None
    values = [_column(tables, k, 0.0) for k in COMPONENTS]
    if not _types(chain.from_iterable(values)) <= _NUMBERS:
        return None
    with np.errstate(over="raise", invalid="raise"):
        six = np.array(values, dtype=float).T * unit_factor(reader.units.inertia, "inertia")
    if not np.all(np.isfinite(six)):
        return None
    t = tensor_from_six(six)
    if realisability_problems(t).any():
        return None
    own[np.array(rows)] = t
    given = dict(zip(rows, map(tuple, six.tolist())))
    return list(map(given.get, range(own.shape[0])))


def _odd_row(reader, i: int, item, own: np.ndarray):
    """A row with keys beyond the plain ones (shape, rotate, density, maturity...), one at a time."""
    from steelyard.core.document.model import item_with
    from steelyard.io.ledger.read_items import ITEM_KEYS
    from steelyard.io.ledger.read_values import si_value

    it = reader.raw[i]
    changes: dict = {}
    if not ITEM_KEYS.issuperset(it):
        changes.update(reader._more(i, it))
    if "shape" in it:
        if "inertia" in it:
            return _give_up()
        shape = changes["shape"] = reader._shape(i, it["shape"])
        t = shape.local_tensor(item.mass)
        if not np.all(np.isfinite(t)):
            return _give_up()
        own[i] = t
    if "rotate" in it:
        rotate = changes["rotate"] = reader._rotate(i, it["rotate"])
        if rotate:
            r = rotation_matrix(rotate)
            own[i] = r @ own[i] @ r.T
    if "density" in it:
        d = it["density"]
        if type(d) not in _NUMBERS:
            return _give_up()  # a unit string: its unit is kept in given_units, the other reader does that
        density = changes["density"] = si_value(d, "density", reader.units.density_unit, reader.source, "", "density")
        if not density > 0:
            return _give_up()
    return item_with(item, **changes)


def _give_up():
    raise ValueError("irregular row")
