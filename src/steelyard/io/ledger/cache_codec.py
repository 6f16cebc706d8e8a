"""A loaded ledger as bytes and back, for the read cache (io.ledger.cache).

Pickle, but with two changes. Items are stored by column (one list per
field) and rebuilt by a generated loop: unpickling 100,000 item objects one
by one costs a quarter of parsing the file, the columns a small part of it.
And the reading side is a restricted unpickler: it builds only steelyard's
own core classes, numpy arrays and a few plain stdlib value types, so a
cache file someone else wrote can never run code (it is also checked by
sha256 before it is unpickled; this is the second line).
"""

from __future__ import annotations

import dataclasses
import io
import pickle
from collections import deque
from itertools import chain, repeat
from operator import attrgetter, is_

import numpy as np

from steelyard.core.document.model import Item, Ledger, items_from_columns

PROTOCOL = 5

#: stdlib classes a ledger may hold (TOML dates and times in `user` data; sets, complex)
_STDLIB = {
    ("builtins", "set"), ("builtins", "frozenset"), ("builtins", "complex"), ("builtins", "slice"),
    ("builtins", "range"), ("builtins", "bytearray"),
    ("datetime", "date"), ("datetime", "datetime"), ("datetime", "time"), ("datetime", "timedelta"),
    ("datetime", "timezone"),
}
#: what numpy's arrays and scalars pickle as (numpy 1 and 2 names)
_NUMPY = {
    ("numpy", "ndarray"), ("numpy", "dtype"),
    ("numpy.core.multiarray", "_reconstruct"), ("numpy._core.multiarray", "_reconstruct"),
    ("numpy.core.multiarray", "scalar"), ("numpy._core.multiarray", "scalar"),
    ("numpy.core.numeric", "_frombuffer"), ("numpy._core.numeric", "_frombuffer"),
}


class Refused(pickle.UnpicklingError):
    """The cache file asks for something a ledger never holds."""


class _Restricted(pickle.Unpickler):
    def find_class(self, module: str, name: str):
        if (module, name) in _STDLIB or (module, name) in _NUMPY:
            return super().find_class(module, name)
        if module == "numpy.dtypes" or module.startswith("steelyard.core."):
            if "." in name:  # a dotted name reaches through attributes: never needed
                raise Refused(f"{module}.{name}")
            obj = super().find_class(module, name)
            if isinstance(obj, type):  # a class, whose constructor is pure (core does no I/O); never a function
                return obj
        raise Refused(f"{module}.{name}")


def _fields() -> tuple[str, ...]:
    return tuple(f.name for f in dataclasses.fields(Item))


_CONSTANT_TYPES = (type(None), bool, int, float, str)


def _encode(values: list) -> tuple:
    """One item column, in the quickest form to read back: ("same", v), ("text", n, joined),
    ("floats", n, k, none_positions, array) or ("list", values)."""
    if not values:
        return ("list", values)
    first = values[0]
    if type(first) in _CONSTANT_TYPES or first == ():
        if all(map(is_, values, repeat(first))):
            return ("same", first)
    types = set(map(type, values))
    if types == {str}:
        joined = "\0".join(values)
        if joined.count("\0") == len(values) - 1:  # no value holds the separator
            return ("text", len(values), joined)
    if types == {tuple} or types == {tuple, type(None)}:
        rows = [v for v in values if v is not None]
        lengths = set(map(len, rows))
        if len(lengths) == 1 and 0 not in lengths and set(map(type, chain.from_iterable(rows))) == {float}:
            nones = [i for i, v in enumerate(values) if v is None]
            return ("floats", len(values), len(rows[0]), nones, np.array(rows, dtype=np.float64))
    return ("list", values)


def _decode(column: tuple, n: int) -> tuple[bool, object]:
    """(same?, value or list of n values) of an `_encode`d column; ValueError on anything else."""
    kind = column[0]
    if kind == "same" and len(column) == 2:
        return True, column[1]
    if kind == "list" and len(column) == 2 and type(column[1]) is list and len(column[1]) == n:
        return False, column[1]
    if kind == "text" and len(column) == 3 and column[1] == n and type(column[2]) is str:
        values = column[2].split("\0")
        if len(values) == n:
            return False, values
    if kind == "floats" and len(column) == 5 and column[1] == n and type(column[4]) is np.ndarray:
        _, _, k, nones, array = column
        if array.dtype == np.float64 and array.shape == (n - len(nones), k) and type(nones) is list:
            rows = list(zip(*array.T.tolist())) if len(array) else []
            if nones:
                gaps = np.asarray(nones, dtype=np.int64)
                if gaps.min() < 0 or gaps.max() >= n:
                    raise ValueError("damaged item column")
                present = np.ones(n, dtype=bool)
                present[gaps] = False
                out = [None] * n
                deque(map(out.__setitem__, np.flatnonzero(present).tolist(), rows), maxlen=0)  # a loop in C
                rows = out
            if len(rows) == n:
                return False, rows
    raise ValueError("damaged item column")


def dumps(ledger: Ledger) -> bytes | None:
    """The ledger as bytes; None when it holds something this codec does not store by column."""
    if not hasattr(ledger, "__dict__") or type(ledger) is not Ledger:
        return None
    items = ledger.items
    if any(type(it) is not Item for it in items):
        return None
    names = _fields()
    state = dict(ledger.__dict__)
    state.pop("items", None)
    values = [list(c) for c in zip(*map(attrgetter(*names), items))] if items else [[] for _ in names]
    if "index" in state and state["index"] == dict(zip(values[names.index("id")], range(len(items)))):
        state["index"] = None  # rebuilt on reading: quicker than unpickling 100,000 entries
    columns = [_encode(v) for v in values]
    out = io.BytesIO()
    pickle.Pickler(out, protocol=PROTOCOL).dump((names, len(items), columns, state))
    return out.getvalue()


def loads(data: bytes, start: int = 0) -> Ledger:
    """The ledger `dumps` stored at `data[start:]`; raises (pickle.UnpicklingError, ValueError, ...) on
    anything else."""
    stream = io.BytesIO(data)  # shares the bytes (no copy) until written to
    stream.seek(start)
    names, n, columns, state = _Restricted(stream).load()
    if (type(names) is not tuple or names != _fields() or type(n) is not int or type(columns) is not list
            or len(columns) != len(names) or type(state) is not dict
            or not all(type(c) is tuple and c for c in columns)):
        raise ValueError("not a ledger cache payload")
    decoded = [_decode(c, n) for c in columns]
    items = tuple(items_from_columns(n, {k: v for k, (s, v) in zip(names, decoded) if not s},
                                     **{k: v for k, (s, v) in zip(names, decoded) if s}))
    if len(items) != n:
        raise ValueError("damaged item columns")
    ledger = object.__new__(Ledger)
    ledger.__dict__.update(state)
    ledger.__dict__["items"] = items
    if "index" in state and state["index"] is None:
        ledger.__dict__["index"] = dict(zip(map(attrgetter("id"), items), range(n)))
    return ledger
