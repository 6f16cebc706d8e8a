"""CSV -> ledger, all or nothing: every cell converted and checked before any item is built.

A new ledger takes its units from the `mass`, `x` and `xx` columns; merged
`into` an existing ledger, a row whose id exists replaces that item in place
and new ids are appended, and a column the CSV lacks leaves that field alone.
The result is then written to TOML and read back with the full ledger reader
(csv_check), so the import refuses whatever any command would refuse later,
and says at which CSV line and column. See docs/exchange.md.
"""

from __future__ import annotations

import gc
import tomllib
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass, replace

import numpy as np

from steelyard.core.control.growth import growth_table
from steelyard.core.document.model import FileUnits, Item, Ledger, items_from_columns
from steelyard.core.errors import SteelyardError
from steelyard.core.physics.groups import group_depth_problem
from steelyard.core.physics.inertia import COMPONENTS, realisability_problem, realisability_problems, six_from_tensor, \
    tensor_from_six
from steelyard.core.units import number_problem, unit_factor
from steelyard.io.exchange.csv_cells import CONTROL_KEYS, FALSE, TOL_COLUMNS, TRUE
from steelyard.io.exchange.csv_check import CsvPlaces, RowPlaces, check_ledger, csv_column, placed
from steelyard.io.exchange.csv_direct import check_new, direct, new_ledger_text
from steelyard.io.exchange.csv_model import file_units, item_more, make_item, more_problem
from steelyard.io.exchange.csv_read import CsvTable
from steelyard.io.exchange.csv_same import same_items
from steelyard.io.ledger.file import read_bytes
from steelyard.io.ledger.read_items import ITEM_KEYS
from steelyard.io.ledger.toml_read import decode
from steelyard.io.ledger.write_given import cells

#: an item whose inertia cells match its shape's inertia this closely keeps its shape
SHAPE_MATCH_RTOL = 1e-9


@dataclass(frozen=True)
class CsvImport:
    ledger: Ledger
    added: tuple[str, ...]
    replaced: tuple[str, ...]  # existing items the CSV changed
    unchanged: tuple[str, ...] = ()  # existing items the CSV gave exactly as they were
    #: where each item came from, for `check_ledger(..., places)` after the caller adds to the ledger
    places: CsvPlaces | None = None


def _bool(r: CsvTable, k: int, cell: str) -> bool:
    low = cell.lower()
    if low in TRUE:
        return True
    if low in FALSE:
        return False
    raise r.fail(k, "variable", f"must be true or false, got {cell!r}")


def _bools(r: CsvTable, key: str) -> list[bool]:
    """A column of true/false cells: each distinct spelling looked up once."""
    cells = r.cols[key]
    distinct = set(cells)
    known = {c: c.lower() in TRUE for c in distinct if c.lower() in TRUE | FALSE}
    if len(known) < len(distinct):
        for k, c in enumerate(cells):
            if c not in known:
                _bool(r, k, c)  # raises, naming the first bad cell
    return list(map(known.__getitem__, cells))


def _file_value(raw: float, col_unit: str, file_unit: str, dim: str) -> float:
    """A cell value in the ledger's unit: the cell itself when the units agree (exact)."""
    if col_unit == file_unit:
        return float(raw)
    return float(raw) * unit_factor(col_unit, dim) / unit_factor(file_unit, dim)


def _new_units(r: CsvTable) -> FileUnits:
    mass, length = r.units["mass"], r.units["x"]
    return file_units(mass, length, r.units.get("xx", f"{mass}*{length}**2"), r.units.get("density"))


def _inertia(r: CsvTable) -> tuple[np.ndarray, np.ndarray]:
    """(six (n, 6) SI, given (n,)); the three moments are required on a row that gives any."""
    n = r.n
    six, blanks = np.zeros((n, 6)), np.ones((n, 6), dtype=bool)
    present = [c for c in COMPONENTS if r.has(c)]
    for c in present:
        j = COMPONENTS.index(c)
        v, blanks[:, j] = r.si(c)
        six[:, j] = np.where(blanks[:, j], 0.0, v)
    given = ~blanks.all(axis=1)
    for j, c in enumerate(COMPONENTS[:3]):
        if present:
            r.reject(c if r.has(c) else present[0], given & blanks[:, j],
                     f"a row with own inertia needs {c} (products default to 0)")
    rows = np.flatnonzero(given)
    with np.errstate(all="ignore"):  # denormal moments: the check below decides, no warning text
        bad = realisability_problems(tensor_from_six(six[rows])) if rows.size else np.zeros(0, bool)
    if bad.any():
        k = int(rows[np.argmax(bad)])
        raise r.fail(k, "xx" if r.has("xx") else present[0],
                     realisability_problem(tensor_from_six(six[k])) or "not physically possible")
    return six, given


def _fraction(r: CsvTable, k: int, cell: str) -> float:
    text = cell.replace(",", ".") if r.comma else cell
    percent = text.endswith("%")
    number = text[:-1].rstrip() if percent else text
    if number_problem(number):
        raise r.fail(k, "growth", f"must be a fraction 0..1 or a percentage, got {cell!r}")
    f = float(number) / (100.0 if percent else 1.0)
    if not 0.0 <= f <= 1.0:
        raise r.fail(k, "growth", f"must lie in 0..1 (0..100 %), got {cell!r}")
    return f


def _other(r: CsvTable, k: int, cell: str) -> dict:
    try:
        table = tomllib.loads(f"v = {cell}")["v"]
    except (tomllib.TOMLDecodeError, RecursionError, ValueError):
        table = None
    if not isinstance(table, dict):
        raise r.fail(k, "other", "must be a TOML inline table, e.g. { removable = true, user = { part = \"A-12\" } }")
    clash = sorted(set(table) & (ITEM_KEYS | set(CONTROL_KEYS)))
    if clash:
        raise r.fail(k, "other", f"key {clash[0]!r} has its own column or is a ledger key")
    problem = more_problem(table)
    if problem:
        raise r.fail(k, "other", problem)
    return table


def _ids(r: CsvTable, into: Ledger | None) -> None:
    """Ids as written: non-blank, unique, and not an existing id with spaces trimmed or added."""
    ids = r.cols["id"]
    if into is None and len(set(ids)) == len(ids) and all(map(str.strip, ids)):
        r.ids[:] = ids  # every id non-blank and unique: the loop below would find nothing
        return
    seen: dict[str, int] = {}
    existing = into.index if into is not None else {}
    loose: dict[str, str] | None = None
    for k, ident in enumerate(r.cols["id"]):
        r.ids[k] = ident
        if not ident.strip():
            raise r.fail(k, "id", "required: a non-empty id")
        if ident in seen:
            raise r.fail(k, "id", f"duplicate id (first on line {r.lines[seen[ident]]})")
        seen[ident] = k
        if existing and ident not in existing:
            if loose is None:
                loose = {i.strip(): i for i in existing}
            near = loose.get(ident.strip())
            if near is not None:
                raise r.fail(k, "id", f"is not in the ledger, but {near!r} is: the two differ only in spaces "
                                      "around them (did a spreadsheet trim or pad the cell?)")


class _Columns:
    """Every column converted and checked, before any item is built."""

    def __init__(self, r: CsvTable, into: Ledger | None, units: FileUnits):
        n = r.n
        _ids(r, into)
        if r.has("group") and any(map(group_depth_problem, set(r.cols["group"]))):  # each path once
            for k, g in enumerate(r.cols["group"]):
                problem = group_depth_problem(g)
                if problem:
                    raise r.fail(k, "group", problem)
        self.mass, blank = r.si("mass")
        r.reject("mass", blank, "required: a number")
        r.reject("mass", self.mass < 0, "must be >= 0, got {cell!r}")
        self.cg = np.empty((n, 3))
        for j, c in enumerate("xyz"):
            self.cg[:, j], blank = r.si(c)
            r.reject(c, blank, "required: a number")
        self.quantity = None
        if r.has("quantity"):
            q, blank = r.floats("quantity")
            r.reject("quantity", ~blank & ((q < 1) | (q != np.round(q)) | (q > 2 ** 53)),
                     "must be a whole number >= 1, got {cell!r}")
            self.quantity = np.where(blank, 1.0, q).astype(np.int64).tolist()
        self.variable = _bools(r, "variable") if r.has("variable") else None
        self.six, self.given = _inertia(r)
        self.density = None
        if r.has("density"):
            d, blank = r.si("density")
            r.reject("density", ~blank & ~(d > 0), "must be > 0, got {cell!r}")
            self.density = [None if b else float(x) for x, b in zip(d, blank)]
        if r.has("maturity"):
            table = growth_table(into if into is not None else Ledger())
            for k, c in enumerate(r.cols["maturity"] if not set(r.cols["maturity"]) <= {"", *table} else ()):
                if c and c not in table:
                    raise r.fail(k, "maturity", f"unknown maturity {c!r} (use one of: {', '.join(table)})")
        self.growth = ([_fraction(r, k, c) if c else None for k, c in enumerate(r.cols["growth"])]
                       if r.has("growth") else None)
        self.tol = self._tolerances(r, units) if any(r.has(c) for c in TOL_COLUMNS) else None
        self.other = ([_other(r, k, c) if c else {} for k, c in enumerate(r.cols["other"])]
                      if r.has("other") else None)
        if self.other is not None and r.units["x"] != units.length:  # a tank table's lengths: into the file's unit
            from steelyard.io.exchange.csv_cg_table import rescaled

            f_csv, f_file = unit_factor(r.units["x"], "length"), unit_factor(units.length, "length")
            for o in self.other:
                if "cg_table" in o:
                    o["cg_table"] = rescaled(o["cg_table"], f_csv, f_file)

    @staticmethod
    def _tolerances(r: CsvTable, units: FileUnits) -> list:
        n = r.n
        kinds = r.cols["tol kind"] if r.has("tol kind") else [""] * n
        cols = {c: r.floats(c) if r.has(c) else (np.full(n, np.nan), np.ones(n, bool)) for c in TOL_COLUMNS[1:]}
        out = []
        for k in range(n):
            given = [c for c in TOL_COLUMNS[1:] if not cols[c][1][k]]
            kind = kinds[k]
            if not kind:
                if given:
                    raise r.fail(k, given[0], "a tolerance needs 'tol kind' (sigma or bound)")
                out.append(None)
                continue
            if kind not in ("sigma", "bound"):
                raise r.fail(k, "tol kind", f"must be sigma or bound, got {kind!r}")
            neg = [c for c in given if cols[c][0][k] < 0]
            if neg:
                raise r.fail(k, neg[0], "a tolerance must be >= 0")
            tol: dict = {}  # in the ledger's units, as the file would say it
            if "tol mass" in given:
                tol["mass"] = _file_value(cols["tol mass"][0][k], r.units["tol mass"], units.mass, "mass")
            if any(c in given for c in TOL_COLUMNS[2:]):
                tol["cg"] = [0.0 if cols[c][1][k] else _file_value(cols[c][0][k], r.units[c], units.length, "length")
                             for c in TOL_COLUMNS[2:]]
            out.append({**tol, "kind": kind})
        return out


def _more(base: Item | None, r: CsvTable, cols: _Columns, k: int) -> dict:
    """The row's keys beyond v1: the CSV's columns over what the existing item had."""
    more = item_more(base) if base is not None else {}
    if cols.other is not None:
        more = {key: v for key, v in more.items() if key in CONTROL_KEYS}
        more.update(cols.other[k])
    for key, values in (("maturity", r.cols.get("maturity")), ("growth", cols.growth)):
        if values is not None:
            more.pop(key, None)
            if values[k] not in (None, ""):
                more[key] = values[k]
    if cols.tol is not None:
        more.pop("tolerance", None)
        if cols.tol[k] is not None:
            more["tolerance"] = cols.tol[k]
    return more


def _own(base: Item | None, j: int | None, into: Ledger | None, cols: _Columns, r: CsvTable, k: int):
    """(inertia, shape, rotate): the CSV's, or the item's own when its cells match them."""
    if not any(r.has(c) for c in COMPONENTS):
        return (base.inertia, base.shape, base.rotate) if base is not None else (None, None, ())
    if not cols.given[k]:
        return None, None, ()
    if base is not None and (base.inertia is not None or base.shape is not None):
        old = six_from_tensor(into.arrays.own[j])
        scale = max(float(np.abs(old[:3]).sum()), np.finfo(float).tiny)
        if np.all(np.abs(cols.six[k] - old) <= SHAPE_MATCH_RTOL * scale):
            return base.inertia, base.shape, base.rotate
    return tuple(cols.six[k].tolist()), None, ()


@contextmanager
def _no_cycle_collection() -> Iterator[None]:
    """Cyclic garbage collection off while the import builds its objects, as it was after.

    Building 100,000 items makes millions of objects and no reference cycles;
    each automatic collection would walk every live one (about a third of the
    import's time at that size). Plain reference counting still frees all of it.
    """
    was = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was:
            gc.enable()


def read_csv(text: str, *, source: str, decimal_comma: bool = False, into: Ledger | None = None,
             check: bool = True, at: str | None = None) -> CsvImport:
    """Build the ledger a CSV describes (alone, or merged `into` an existing ledger); raises on any bad cell.

    The result is always written out and read back with the ledger reader, any
    problem named by CSV line and column, whatever `check` says (kept for callers
    that check the final text again after adding a change-log entry; they can
    pass `places` to that check to keep the CSV locations). A new ledger of v1
    columns only is written from the columns (csv_direct): its `ledger` is then
    the one the text reads back as, which `check_ledger` knows (its text again).
    """
    with _no_cycle_collection():
        return _read_csv(text, source=source, decimal_comma=decimal_comma, into=into, at=at)


def _read_csv(text: str, *, source: str, decimal_comma: bool, into: Ledger | None, at: str | None) -> CsvImport:
    r = CsvTable(text, source, decimal_comma)
    units = into.units if into is not None else _new_units(r)
    cols = _Columns(r, into, units)
    if into is None and direct(r):  # no Items to build: the text written from the columns, checked by column
        places = CsvPlaces(RowPlaces(r.lines, r.ids), r.labels)
        given = _given(r)
        try:
            text = new_ledger_text(r, cols, units, given)
        except SteelyardError as exc:  # located as csv_check locates what its writer raises
            raise placed(exc, source, places) from None
        given.clear()
        for key in [k for k in r.cols if k not in ("id", "name", "group")]:
            del r.cols[key]  # the number cells (millions of strings): freed before the read-back needs the memory
        r.values.clear()
        r.joined.clear()
        ledger = check_new(text, r, cols, source, places, lambda: _new_items(r, cols))
        return CsvImport(ledger, tuple(r.ids), (), (), places)
    if into is None:
        ledger = Ledger(tuple(_new_items(r, cols)), units)
        ids = r.ids
        places = CsvPlaces(RowPlaces(r.lines, ids), r.labels)
        given = _given(r)
        del r, cols  # the cells (millions of strings): freed before the write and read-back need the memory
        check_ledger(ledger, source, places, given)  # (the number cells kept for the writer, freed after it)
        return CsvImport(ledger, tuple(ids), (), (), places)
    index = into.index
    items = list(into.items)
    added, replaced, same = [], [], []
    mass, cg = cols.mass.tolist(), cols.cg.tolist()
    for k, ident in enumerate(r.ids):
        j = index.get(ident)
        base = items[j] if j is not None else None
        inertia, shape, rotate = _own(base, j, into, cols, r, k)
        try:
            item = make_item(
                ident, mass[k], tuple(cg[k]), more=_more(base, r, cols, k),
                name=r.cols["name"][k] if r.has("name") else (base.name if base else ""),
                group=r.cols["group"][k] if r.has("group") else (base.group if base else ""),
                quantity=cols.quantity[k] if cols.quantity is not None else (base.quantity if base else 1),
                inertia=inertia, shape=shape, rotate=rotate,
                variable=cols.variable[k] if cols.variable is not None else (base.variable if base else False),
                density=cols.density[k] if cols.density is not None else (base.density if base else None),
                given_units=dict(base.given_units) if base else {})
        except SteelyardError as exc:
            raise r.fail(k, "other" if r.has("other") else None, exc.message) from None
        if base is not None and base.source is not None:  # placed from an assembly: its own file holds it
            _same_placed(r, k, base, item)
            same.append(ident)
            continue
        if j is None:
            items.append(item)
            added.append(ident)
        elif item == base:
            same.append(ident)
        else:
            items[j] = item
            replaced.append(ident)
    ledger = into.evolve(items=tuple(items))
    places = CsvPlaces(RowPlaces(r.lines, r.ids), r.labels)
    check_ledger(ledger, source, places, at=at)
    return CsvImport(ledger, tuple(added), tuple(replaced), tuple(same), places)


def _same_placed(r: CsvTable, k: int, base: Item, item: Item) -> None:
    """A row of an item placed from an assembly (an export of the parent lists them) merges as it is;
    a changed value is refused, naming the assembly: only its own file can change it."""
    try:
        same_items((replace(base, source=None),), (item,))
    except SteelyardError as exc:
        raise r.fail(k, csv_column(exc.field, r.labels), f"comes from assembly {base.source!r} and differs from "
                     f"it ({exc.field}): change it in that assembly's own file") from None

#: writer field (write_items.items_text) -> the CSV column that gives it
_NUMBER_FIELDS = {"mass": "mass", "cg.0": "x", "cg.1": "y", "cg.2": "z", **{f"inertia.{c}": c for c in COMPONENTS}}


def _given(r: CsvTable) -> dict:
    """The number cells of a new ledger's items and their values, for the writer to take those that
    already are its text: field -> (cells, float of each cell[, whether each is plain and short
    (write_given.cells), judged on the column text the reading joined]), one per item."""
    out = {}
    for name, key in _NUMBER_FIELDS.items():
        if key in r.values:
            joined = r.joined.get(key)
            judged = cells(joined) if joined is not None else None
            out[name] = (r.cols[key], r.values[key]) if judged is None else (r.cols[key], r.values[key],
                                                                              judged[0] & judged[1])
    return out


def _new_items(r: CsvTable, cols: _Columns) -> list[Item]:
    """The items of a new ledger, a field at a time: what `make_item` gives row by row
    (tests/test_csv_import_fast.py compares the two)."""
    n = len(r.ids)
    columns: dict = {"id": r.ids, "mass": cols.mass.tolist(), "cg": list(zip(*cols.cg.T.tolist()))}
    for key in ("name", "group"):
        if r.has(key):
            columns[key] = r.cols[key]
    if cols.quantity is not None:
        columns["quantity"] = cols.quantity
    if any(r.has(c) for c in COMPONENTS):
        inertia: list = [None] * n
        rows = np.flatnonzero(cols.given)
        for k, six in zip(rows.tolist(), zip(*cols.six[rows].T.tolist())):  # tuples of the rows that give one
            inertia[k] = six
        columns["inertia"] = inertia
    if cols.variable is not None:
        columns["variable"] = cols.variable
    if cols.density is not None:
        columns["density"] = cols.density
    if any(r.has(c) for c in ("other", "maturity", "growth")) or cols.tol is not None:
        more = [_more(None, r, cols, k) for k in range(n)]
        for k, m in enumerate(more):
            problem = more_problem(m)
            if problem:
                raise r.fail(k, "other" if r.has("other") else None, problem)
        for key in sorted(set().union(*more)):
            default = False if key == "removable" else None
            columns[key] = [m.get(key, default) for m in more]
            if key == "cg_table":
                columns[key] = [tuple(x) if isinstance(x, list) else x for x in columns[key]]
    return items_from_columns(n, columns)


def read_csv_file(path: str, *, decimal_comma: bool = False, into: Ledger | None = None,
                  check: bool = True, at: str | None = None) -> CsvImport:
    """`read_csv` of the file at `path`; `at`: where the merged ledger goes (its placements are read from
    there)."""
    text = decode(read_bytes(path), source=str(path))
    return read_csv(text, source=str(path), decimal_comma=decimal_comma, into=into, check=check, at=at)
