"""Reading a text much like one read before: unchanged [[item]] tables are taken from the earlier reading.

Two snapshots of one vehicle a week apart, two commits of one file: of
100,000 item tables a few hundred differ. A `ReadMemory` keeps, from one
piece-by-piece reading (io.ledger.read_stream), each item table's exact
text and the row it became. A later reading through the same memory cuts
its pieces into item tables the same way; a table whose text is
byte-for-byte one seen before is that row again (its Item is immutable and
shared, its columns copied), and only the others are parsed and checked.

Why this means what a fresh reading means: an item's values depend on its
own table's text and on [units] alone, so a reuse needs the same text
before the first item (the head, byte for byte) and the same parser.
A table is only taken whole when its text holds no other table header
(no line starting with "[" after its own `[[item]]` line): the last table
of a file, which runs into the tables after the items, is always parsed.
Whatever involves more than one item — a repeated id, loadouts, tanks,
the document's checks — runs on the assembled rows exactly as on a fresh
reading (io.ledger.read._ledger_from_data). Anything unexpected makes the
reading fall back to the fresh path, which words any error.
"""

from __future__ import annotations

import operator
from dataclasses import dataclass
from itertools import repeat

import numpy as np

from steelyard.core.document.model import ItemArrays, pick as _pick

HEADER = "[[item]]"
_SPLIT = "\n" + HEADER
_OTHER_TABLE = "\n["


def tables_of(piece: str) -> list[str] | None:
    """The text of each [[item]] table of a piece that starts with a `[[item]]` line, header taken
    off; None when the piece does not start so."""
    if not piece.startswith(HEADER):
        return None
    keys = piece.split(_SPLIT)
    keys[0] = keys[0][len(HEADER):]
    return keys


def _whole(keys: list[str]) -> list[bool]:
    """Per table: no other table header inside, so its text is the item and nothing else."""
    return list(map(operator.not_, map(operator.contains, keys, repeat(_OTHER_TABLE))))


@dataclass
class _Earlier:
    head: str
    fast: bool
    keys: list[str]  # each row's table text
    whole: list[bool]  # the table is the item alone (see _whole)
    items: np.ndarray  # (n,) object: the Items
    arrays: ItemArrays
    own_at: np.ndarray  # (n,) index into arrays' sparse own values, -1 where none
    bare: np.ndarray  # (n,) bool: the row gives an inertia component as a bare number
    #: the ledger's `more_rows` (core.document.model) once it was made from these rows alone (no rows
    #: placed from assemblies); None until then
    more: list[int] | None = None
    _lookup: tuple[np.ndarray, np.ndarray] | None = None

    def find(self, keys: list[str]) -> np.ndarray:
        """Per table text of `keys`: the earlier row whose text has the same hash (the first such row),
        or -1. Equal hashes alone decide nothing: the caller compares the texts."""
        if self._lookup is None:  # made when a later reading first asks: sorted hashes, their rows
            rows = np.flatnonzero(np.array(self.whole, dtype=bool))  # only a whole table can be taken
            h = np.fromiter(map(hash, self.keys), np.int64, len(self.keys))[rows]
            order = np.argsort(h, kind="stable")  # equal hashes keep file order: the first row wins
            self._lookup = (h[order], rows[order])
        sorted_h, rows = self._lookup
        m = len(keys)
        got = np.full(m, -1, dtype=np.intp)
        if not len(sorted_h) or not m:
            return got
        want = np.fromiter(map(hash, keys), np.int64, m)
        at = np.minimum(np.searchsorted(sorted_h, want), len(sorted_h) - 1)
        hit = sorted_h[at] == want
        got[hit] = rows[at[hit]]
        return got


@dataclass
class ReadMemory:
    """What one reading leaves for the next (see the module docstring). Not thread-safe; one per task."""

    earlier: _Earlier | None = None
    #: False: keep the first reading only (a diff reads two texts; no third will come)
    chain: bool = True
    #: rows taken from the earlier reading by the last reading (for tests and benchmarks)
    reused: int = 0
    #: (earlier rows, rows) of the tables the last reading took from the earlier one: a hint for a diff
    #: (core.history.diff checks that each pair holds the same Item object)
    shared: tuple[np.ndarray, np.ndarray] | None = None

    # ---------------------------------------------------------------- one reading

    def start(self, head: str, fast: bool) -> "_Reading":
        self.reused, self.shared = 0, None
        e = self.earlier
        usable = e is not None and e.head == head and e.fast == fast
        return _Reading(self, head, fast, e if usable else None)


class _Reading:
    """One reading through a memory: rewrites each piece to its unseen tables, then assembles the rows."""

    def __init__(self, memory: ReadMemory, head: str, fast: bool, earlier: _Earlier | None):
        self.memory = memory
        self.head = head
        self.fast = fast
        self.earlier = earlier
        self.keys: list[str] = []  # every table's text, file order
        self.whole: list[bool] = []
        self.code: list[int] = []  # per row: earlier row (>= 0) or -1 (parsed now)
        self.parsed_bare: list[np.ndarray] = []  # per piece parsed, per row: an inertia component given bare
        self.bare_rows: np.ndarray | None = None
        self.bad = False  # a piece did not cut as expected: remember nothing, reuse nothing

    def piece(self, k: int, text: str) -> str:
        """The text to parse for piece `k` (k >= 1): its tables not seen before, in file order."""
        keys = tables_of(text)
        if keys is None:
            self.bad = True
            return text
        m = len(keys)
        # each "\n[" a table boundary: every table is an item alone (one count, not one search per table)
        whole = [True] * m if text.count("\n[") == m - 1 else _whole(keys)
        self.keys.extend(keys)
        self.whole.extend(whole)
        e = self.earlier
        if e is None:
            self.code.extend(repeat(-1, m))
            return text
        got = e.find(keys)
        at = np.flatnonzero(got >= 0)
        if len(at):
            equal = np.fromiter(map(operator.eq, _pick(keys, at), _pick(e.keys, got[at])), bool, len(at))
            got[at[~equal]] = -1
        if not all(whole):
            got[~np.array(whole, dtype=bool)] = -1
        got = got.tolist()
        self.code.extend(got)
        missed = got.count(-1)
        if not missed:
            return ""
        if missed == m:
            return text
        return "\n".join([HEADER + k for k, g in zip(keys, got) if g == -1])

    def parsed_rows(self, raw: list, items: list) -> None:
        """Note, per row just parsed (`raw` tables, their Items), whether it gives an inertia component
        as a bare number. An Item with no unit written anywhere (NO_UNITS) gave every number bare."""
        from steelyard.core.document.model import NO_UNITS
        from steelyard.io.ledger.read import has_bare_inertia

        n = len(raw)
        has = np.fromiter(map(dict.__contains__, raw, repeat("inertia")), bool, n)
        plain = np.fromiter(map(operator.is_, map(operator.attrgetter("given_units"), items), repeat(NO_UNITS)),
                            bool, n)
        bare = has & plain
        for i in np.flatnonzero(has & ~plain).tolist():
            bare[i] = has_bare_inertia((raw[i],))
        self.parsed_bare.append(bare)

    def assemble(self, parsed_items: list, parsed: ItemArrays):
        """(items, arrays, bare) of the whole file from the parsed rows and the earlier ones; None when
        the rows do not line up (the caller reads afresh)."""
        code = np.array(self.code, dtype=np.intp)
        n = len(code)
        miss = np.flatnonzero(code < 0)
        parsed_bare = np.concatenate(self.parsed_bare) if self.parsed_bare else np.zeros(0, dtype=bool)
        if (self.bad or len(miss) != len(parsed_items) or len(parsed.unit_mass) != len(miss)
                or len(parsed_bare) != len(miss)):
            return None
        e = self.earlier
        if e is None or len(miss) == n:
            self.bare_rows = parsed_bare
            return parsed_items, parsed, bool(parsed_bare.any())
        hit = np.flatnonzero(code >= 0)
        src = code[hit]
        items = np.empty(n, dtype=object)
        items[hit] = e.items[src]
        if len(miss):
            parsed_obj = np.empty(len(miss), dtype=object)
            parsed_obj[:] = parsed_items
            items[miss] = parsed_obj

        def column(earlier_col, parsed_col, shape=()):
            out = np.empty((n, *shape), dtype=earlier_col.dtype)
            out[hit] = earlier_col[src]
            out[miss] = parsed_col
            return out

        a = e.arrays
        unit_mass = column(a.unit_mass, parsed.unit_mass)
        quantity = column(a.quantity, parsed.quantity)
        cg = np.asfortranarray(column(np.asarray(a.cg), np.asarray(parsed.cg), (3,)))
        variable = column(a.variable, parsed.variable)
        e_rows, e_values = a.own_sparse()
        at = e.own_at[src]
        with_own = at >= 0
        p_rows, p_values = parsed.own_sparse()
        rows = np.concatenate([hit[with_own], miss[p_rows]])
        values = np.concatenate([e_values[at[with_own]], p_values]).reshape(-1, 3, 3)
        order = np.argsort(rows, kind="stable")
        arrays = ItemArrays.sparse(unit_mass, quantity, cg, variable, rows[order], values[order])
        self.bare_rows = column(e.bare, parsed_bare)
        self.memory.reused = len(hit)
        self.memory.shared = (src, hit)
        return items.tolist(), arrays, bool(self.bare_rows.any())

    def more_rows(self, items: list) -> list[int] | None:
        """`more_rows_of(items)` of the assembled rows when the earlier reading's ledger left its own:
        the taken rows hold the very Items it looked at, so only the parsed rows are looked at now.
        Call after `assemble` (and after the caller refused a repeated id); None when not known."""
        from steelyard.core.document.model import more_rows_of

        e, shared = self.earlier, self.memory.shared
        if e is None or e.more is None or shared is None:
            return None
        src, hit = shared
        new_row = np.full(len(e.items), -1, dtype=np.intp)
        new_row[src] = hit
        kept = new_row[np.asarray(e.more, dtype=np.intp)]
        miss = np.flatnonzero(np.array(self.code, dtype=np.intp) < 0)
        parsed = more_rows_of(_pick(items, miss))
        return np.sort(np.concatenate([kept[kept >= 0], miss[np.asarray(parsed, dtype=np.intp)]])).tolist()

    def remember(self, items: list, arrays: ItemArrays) -> _Earlier | None:
        """Keep this reading for the next one (only when every piece cut as expected); the kept
        reading, or None when nothing new was kept."""
        n = len(items)
        if self.earlier is not None and not self.memory.chain:
            return None
        if self.bad or len(self.keys) != n or self.bare_rows is None or len(self.bare_rows) != n:
            self.memory.earlier = None
            return None
        obj = np.empty(n, dtype=object)
        obj[:] = items
        own_rows, _ = arrays.own_sparse()
        own_at = np.full(n, -1, dtype=np.intp)
        own_at[own_rows] = np.arange(len(own_rows))
        self.memory.earlier = _Earlier(self.head, self.fast, self.keys, self.whole, obj, arrays, own_at,
                                       self.bare_rows)
        return self.memory.earlier
