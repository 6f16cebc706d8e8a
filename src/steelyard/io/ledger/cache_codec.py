"""A loaded ledger as bytes and back, for the read cache (io.ledger.cache).

Pickle, but with two changes. Items are stored by column (one list per
field): unpickling 100,000 item objects one by one costs a quarter of parsing
the file, the columns a small part of it. A hit is a `CachedLedger` whose
Items are made from the columns only when something reads `ledger.items`
(a roll-up reads only the numpy columns); the columns are checked whole when
the entry is loaded, so damage is a miss there, never an error later.
And the reading side is a restricted unpickler: it builds only steelyard's
own core classes, numpy arrays and a few plain stdlib value types, so a
cache file someone else wrote can never run code (it is also checked by
sha256 before it is unpickled; this is the second line).
"""

from __future__ import annotations

import dataclasses
import gc
import io
import pickle
import threading
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


def _checked(column: object, n: int) -> tuple:
    """An `_encode`d column of n values, checked whole and cheaply (lengths, kinds, positions) without
    turning it back into values: ("same", v), ("list", values), ("text", joined) or ("floats", k, gaps,
    array). After this check `_expand` cannot fail. ValueError on anything else."""
    if type(column) is not tuple or not column:
        raise ValueError("damaged item column")
    kind = column[0]
    if kind == "same" and len(column) == 2:
        return column
    if kind == "list" and len(column) == 2 and type(column[1]) is list and len(column[1]) == n:
        return column
    if kind == "text" and len(column) == 3 and column[1] == n and type(column[2]) is str and n > 0:
        if column[2].count("\0") == n - 1:  # a scan in C: the split then gives exactly n values
            return ("text", column[2])
    if kind == "floats" and len(column) == 5 and column[1] == n and type(column[4]) is np.ndarray:
        _, _, k, nones, array = column
        if (type(nones) is list and type(k) is int and array.dtype == np.float64
                and array.shape == (n - len(nones), k)):
            if not nones:
                return ("floats", k, None, array)
            gaps = np.asarray(nones)
            if (gaps.dtype.kind == "i" and gaps.ndim == 1 and gaps[0] >= 0 and gaps[-1] < n
                    and bool(np.all(gaps[1:] > gaps[:-1]))):  # distinct rows, in range
                return ("floats", k, gaps, array)
    raise ValueError("damaged item column")


def _expand(plan: tuple, n: int) -> tuple[bool, object]:
    """(same?, value or list of n values) of a column `_checked` passed."""
    kind = plan[0]
    if kind == "same":
        return True, plan[1]
    if kind == "list":
        return False, plan[1]
    if kind == "text":
        return False, plan[1].split("\0")
    _, k, gaps, array = plan
    rows = list(zip(*array.T.tolist())) if len(array) else []
    if gaps is None:
        return False, rows
    present = np.ones(n, dtype=bool)
    present[gaps] = False
    out = [None] * n
    deque(map(out.__setitem__, np.flatnonzero(present).tolist(), rows), maxlen=0)  # a loop in C
    return False, out


def _decode(column: tuple, n: int) -> tuple[bool, object]:
    """(same?, value or list of n values) of an `_encode`d column; ValueError on anything else."""
    return _expand(_checked(column, n), n)


def _make_items(n: int, names: tuple[str, ...], plans: list) -> tuple[Item, ...]:
    decoded = [_expand(p, n) for p in plans]
    return tuple(items_from_columns(n, {k: v for k, (s, v) in zip(names, decoded) if not s},
                                    **{k: v for k, (s, v) in zip(names, decoded) if s}))


_PENDING = "_cached_item_columns"  # CachedLedger: (n, names, checked columns) until the items are made
_BUILD = threading.Lock()


class _LazyItems:
    """`CachedLedger.items` until made: a non-data descriptor, so once the tuple is in the instance's
    `__dict__` (as on any Ledger) reading it costs no call."""

    def __get__(self, ledger, owner=None):
        if ledger is None:
            return ()
        return ledger._made_items()


class CachedLedger(Ledger):
    """A ledger from a cache hit whose Items are made on first use (a roll-up reads only the columns).

    Everything else (tables, arrays, index) is as a fresh read left it. Making the items turns the
    object into a plain `Ledger` (same layout, `__class__` swapped), so equality, `replace`, pickling
    and `type(...) is Ledger` then behave as for any ledger; anything that makes a new ledger from
    this one (`replace`, `evolve`) makes a plain `Ledger`. Making is idempotent and locked: the editor
    may ask from two threads.
    """

    items = _LazyItems()

    def __init__(self, *args, **kwargs):  # what dataclasses.replace calls: the result is a plain Ledger
        Ledger.__init__(self, *args, **kwargs)
        object.__setattr__(self, "__class__", Ledger)

    def _made_items(self) -> tuple[Item, ...]:
        d = self.__dict__
        with _BUILD:
            items = d.get("items")
            if items is None:
                n, names, plans = d[_PENDING]
                collecting = gc.isenabled()
                gc.disable()  # 100,000 new objects, no cycles: a collection pass would be pure cost
                try:
                    items = _make_items(n, names, plans)
                finally:
                    if collecting:
                        gc.enable()
                d["items"] = items
                object.__setattr__(self, "__class__", Ledger)
                del d[_PENDING]
        return items

    def __eq__(self, other):
        self._made_items()
        if isinstance(other, CachedLedger):
            other._made_items()
        return self == other

    __hash__ = Ledger.__hash__

    def __repr__(self) -> str:  # the class name is read before the fields: make the items first
        self._made_items()
        return repr(self)

    def __reduce_ex__(self, protocol):  # copies and pickles are of the plain Ledger
        self._made_items()
        return self.__reduce_ex__(protocol)


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
    plans = [_checked(c, n) for c in columns]  # damage shows here, as a miss, never when items are made
    ledger = object.__new__(CachedLedger)
    ledger.__dict__.update(state)
    ledger.__dict__.pop("items", None)
    if "index" in state and state["index"] is None:
        at = names.index("id")
        same, ids = _expand(plans[at], n)
        ids = [ids] * n if same else ids
        ledger.__dict__["index"] = dict(zip(ids, range(n)))
        plans[at] = ("list", ids)  # split once: the items take these strings
    ledger.__dict__[_PENDING] = (n, names, plans)
    return ledger
