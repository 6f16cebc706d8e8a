"""The items a written ledger reads back as must be the items the import built.

Reading the written text back proves it opens; comparing what it gives with
what was built proves the writer dropped and changed nothing. Each field is
compared as one column (a C-level list comparison); only a column that is not
identical is looked at item by item, to allow what the number writer may do
(io.ledger.toml_write.number: in a unit other than SI a value reads back
exactly when any short text does, else within an ulp or so) and to name the
first item that differs.
"""

from __future__ import annotations

import math
from operator import attrgetter

from steelyard.core.errors import SteelyardError, item_subject

#: fields compared exactly: text, counts and flags are written as they are
_EXACT = ("id", "name", "group", "quantity", "variable")
#: numbers in the file's units: equal, or within the number writer's rounding
_NUMBERS = ("mass", "cg", "density", "inertia")
#: how far (in units in the last place) a number read back may be from the one written
_ULPS = 4


def _close(a: object, b: object) -> bool:
    if a is None or b is None:
        return a is b
    if isinstance(a, tuple) or isinstance(b, tuple):
        return (isinstance(a, tuple) and isinstance(b, tuple) and len(a) == len(b)
                and all(map(_close, a, b)))
    a, b = float(a), float(b)
    return a == b or abs(a - b) <= _ULPS * math.ulp(max(abs(a), abs(b)))


def same_items(built, final) -> None:
    """Raise, naming the first item and field, unless `final` (read back) holds the items `built`."""
    if len(built) != len(final):
        k = min(len(built), len(final))
        ident = (built[k] if k < len(built) else final[k]).id
        raise SteelyardError(f"the written ledger reads back with {len(final)} items, not {len(built)}",
                             subject=item_subject(ident), field="id")
    for name in _EXACT + _NUMBERS:
        get = attrgetter(name)
        a, b = list(map(get, built)), list(map(get, final))
        if a == b:
            continue
        for k, (x, y) in enumerate(zip(a, b)):
            if x != y and (name in _EXACT or not _close(x, y)):
                raise SteelyardError(f"reads back as {y!r}, not as imported ({x!r}): nothing was written",
                                     subject=item_subject(built[k].id), field=name)
