"""Items to and from CSV, for spreadsheets: units in the headers, nothing half-imported.

A header cell is a column name with its unit in brackets (`mass [lb]`,
`x [in]`, `xx [lb*in**2]`); the unit is parsed once per column and every cell
below it is a bare number. Reading is tolerant of what spreadsheets do (a
UTF-8 byte-order mark, `;` or tab separators, decimal commas when asked,
blank or separator-only lines, trailing empty cells) and strict about what
they should not do: a bad cell stops the import with its CSV line number and
column, and nothing is written until the whole file has been read and the
resulting ledger checked. See docs/exchange.md.
"""

from __future__ import annotations

import csv
import io
import math
import re
import tomllib
from dataclasses import dataclass

import numpy as np

from steelyard.core.display import DisplayUnits
from steelyard.core.errors import SteelyardError
from steelyard.core.control.growth import growth_fractions, growth_table
from steelyard.core.physics.inertia import (COMPONENTS, realisability_problem, realisability_problems, six_from_tensor,
                            tensor_from_six)
from steelyard.core.document.model import FileUnits, Item, Ledger
from steelyard.core.control.uncertainty import parse_tolerances
from steelyard.core.units import SYSTEMS, unit_factor
from steelyard.io.ledger.read import ITEM_KEYS, ledger_from_data
from steelyard.io.ledger.write import ledger_to_toml
from steelyard.io.report.control import growth_value, tolerance_si
from steelyard.io.ledger.toml_read import decode, parse_toml
from steelyard.io.ledger.toml_write import value as toml_value

#: column key -> dimension of its numbers (None: no unit), in export order
COLUMNS: dict[str, str | None] = {
    "id": None, "name": None, "group": None, "mass": "mass", "x": "length", "y": "length", "z": "length",
    "quantity": None, "variable": None, **{c: "inertia" for c in COMPONENTS}, "density": "density",
    "maturity": None, "growth": None, "tol kind": None, "tol mass": "mass", "tol x": "length",
    "tol y": "length", "tol z": "length", "other": None,
}
REQUIRED = ("id", "mass", "x", "y", "z")
CONTROL_KEYS = ("maturity", "growth", "tolerance")
TOL_COLUMNS = ("tol kind", "tol mass", "tol x", "tol y", "tol z")
_HEADER = re.compile(r"^(?P<name>[^\[\]]*?)\s*(?:\[(?P<unit>[^\[\]]*)\])?$")
_SI_UNIT = {"mass": "kg", "length": "m", "inertia": "kg*m**2", "density": "kg/m**3"}
_TRUE, _FALSE = {"true", "yes", "y", "1"}, {"false", "no", "n", "0", ""}
#: an item whose inertia cells match its shape's inertia this closely keeps its shape
SHAPE_MATCH_RTOL = 1e-9


# ------------------------------------------------------------------------------------ export

def number_text(si: float, factor: float, decimal_comma: bool = False) -> str:
    """Short text t for si/factor with float(t) * factor == si exactly when one exists."""
    v = si / factor + 0.0  # + 0.0 turns -0.0 into 0.0
    text = f"{v:.17g}"
    for digits in (12, 15, 16, 17):
        t = f"{v:.{digits}g}"
        if float(t) * factor == si:
            text = t
            break
    else:  # the quotient's own rounding is off; a neighbour may multiply back exactly
        up = down = v
        for _ in range(4):
            up, down = math.nextafter(up, math.inf), math.nextafter(down, -math.inf)
            hit = next((c for c in (up, down) if c * factor == si), None)
            if hit is not None:
                text = repr(hit)
                break
    return text.replace(".", ",") if decimal_comma else text


def _units(ledger: Ledger, system: str | None) -> dict[str, str]:
    du = DisplayUnits.choose(ledger.units, system)
    given = next((it.given_units["density"] for it in ledger.items if "density" in it.given_units), None)
    density = (SYSTEMS[system]["density"] if system in SYSTEMS else
               ledger.units.extra.get("density") or given or f"{du.mass}/{du.length}**3")
    return {"mass": du.mass, "length": du.length, "inertia": du.inertia, "density": density}


def ledger_to_csv(ledger: Ledger, *, system: str | None = None, decimal_comma: bool = False) -> str:
    """Every item as one CSV row; numbers in the file's units (or `system`), exact on re-import.

    Own inertia is per unit about the item's CG in body axes, products as
    integrals (∫xy dm); an item with a shape gets the inertia its shape gives.
    """
    growth_fractions(ledger), parse_tolerances(ledger)  # bad keys stop here, named, not half-written
    u = _units(ledger, system)
    items = ledger.items
    extras = [it.extra or {} for it in items]
    keys = ["id", "name", "group", "mass", "x", "y", "z", "quantity", "variable", *COMPONENTS]
    if any(it.density is not None for it in items):
        keys.append("density")
    keys += [k for k in ("maturity", "growth") if any(k in e for e in extras)]
    if any("tolerance" in e for e in extras):
        keys += list(TOL_COLUMNS)
    if any(set(e) - set(CONTROL_KEYS) for e in extras):
        keys.append("other")
    header = [f"{k} [{u[COLUMNS[k]]}]" if COLUMNS[k] else k for k in keys]
    f = {k: unit_factor(u[COLUMNS[k]], COLUMNS[k]) for k in keys if COLUMNS[k]}
    six = six_from_tensor(ledger.arrays.own) if items else np.zeros((0, 6))

    def num(k: str, si: float | None) -> str:
        return "" if si is None else number_text(si, f[k], decimal_comma)

    buf = io.StringIO()
    w = csv.writer(buf, delimiter=";" if decimal_comma else ",", lineterminator="\n")
    w.writerow(header)
    for i, it in enumerate(items):
        e = extras[i]
        cells = {"id": it.id, "name": it.name, "group": it.group, "mass": num("mass", it.mass),
                 "quantity": str(it.quantity), "variable": "true" if it.variable else "false"}
        for k, c in zip("xyz", it.cg):
            cells[k] = num(k, c)
        has_own = it.inertia is not None or it.shape is not None
        for k, v in zip(COMPONENTS, six[i]):
            cells[k] = num(k, float(v)) if has_own else ""
        if "density" in keys:
            cells["density"] = num("density", it.density)
        cells["maturity"] = str(e.get("maturity", ""))
        cells["growth"] = number_text(growth_value(e["growth"]), 1.0, decimal_comma) if "growth" in e else ""
        if "tolerance" in e:
            kind, m, cg = tolerance_si(it, ledger.units)
            cells["tol kind"], cells["tol mass"] = kind, num("tol mass", m)
            for k, c in zip(("tol x", "tol y", "tol z"), cg or (None, None, None)):
                cells[k] = num(k, c)
        rest = {k: v for k, v in e.items() if k not in CONTROL_KEYS}
        cells["other"] = toml_value(rest) if rest else ""
        w.writerow([cells.get(k, "") for k in keys])
    return buf.getvalue()


# ------------------------------------------------------------------------------------ import

@dataclass(frozen=True)
class CsvImport:
    ledger: Ledger
    added: tuple[str, ...]
    replaced: tuple[str, ...]  # existing items the CSV changed
    unchanged: tuple[str, ...] = ()  # existing items the CSV gave exactly as they were


def _sniff(first_line: str, decimal_comma: bool, source: str) -> str:
    choices = (";", "\t") if decimal_comma else (",", ";", "\t")
    counts = {c: first_line.count(c) for c in choices}
    best = max(choices, key=lambda c: counts[c])
    if counts[best] == 0:
        extra = " (with --decimal-comma the separator must be ';' or a tab)" if decimal_comma else ""
        raise SteelyardError(f"cannot find the separator in the header line{extra}", file=source,
                             subject="line 1")
    return best


class _Reader:
    """One CSV text: header, columns of cell strings, then typed, located values."""

    def __init__(self, text: str, source: str, decimal_comma: bool):
        self.source, self.comma = source, decimal_comma
        text = text[1:] if text.startswith("\ufeff") else text  # a byte-order mark from a spreadsheet
        lines = text.splitlines()
        first = next((k for k, s in enumerate(lines) if s.strip(" \t,;")), None)
        if first is None:
            raise SteelyardError("empty CSV file (needs a header line: id,name,mass [kg],...)", file=source)
        sep = _sniff(lines[first], decimal_comma, source)
        reader = csv.reader(io.StringIO(text, newline=""), delimiter=sep)
        self.header: list[str] | None = None
        self.rows: list[list[str]] = []
        self.lines: list[int] = []
        before = 0
        for record in reader:
            start = before + 1
            before = reader.line_num
            cells = [c.strip().strip("\u00a0") for c in record]
            if not any(cells):
                continue
            if self.header is None:
                self.header, self.header_line = cells, start
                self._columns()
                continue
            self.rows.append(cells)
            self.lines.append(start)
        if not self.rows:
            raise SteelyardError("has a header but no item rows", file=source)
        self.ids = [""] * len(self.rows)
        self.cols: dict[str, list[str]] = {}
        width = len(self.header)
        for k, cells in enumerate(self.rows):
            if len(cells) > width and any(cells[width:]):
                raise self.fail(k, None, f"has {len(cells)} cells, the header has {width}")
            cells += [""] * (width - len(cells))
        for key, j in self.index.items():
            self.cols[key] = [r[j] for r in self.rows]

    def _columns(self) -> None:
        self.index: dict[str, int] = {}
        self.labels: dict[str, str] = {}
        self.units: dict[str, str] = {}
        self.factor: dict[str, float] = {}
        where = {"file": self.source, "subject": f"line {self.header_line}"}
        for j, cell in enumerate(self.header):
            m = _HEADER.match(cell)
            name = " ".join((m.group("name") if m else cell).replace("_", " ").lower().split())
            dim = COLUMNS[name] if name in COLUMNS else None
            unit = (m.group("unit") or "").strip() if m else ""
            problem = (f"unknown column (known: {', '.join(COLUMNS)})" if name not in COLUMNS else
                       "column appears twice" if name in self.index else
                       f"needs its unit in brackets, e.g. '{name} [{_SI_UNIT[dim]}]'" if dim and not unit else
                       "takes no unit" if unit and not dim else None)
            if problem:
                raise SteelyardError(problem, field=f"column {cell!r}", **where)
            if dim:
                try:
                    self.factor[name] = unit_factor(unit, dim)
                except SteelyardError as exc:
                    raise exc.located(field=f"column {cell!r}", **where)
                self.units[name] = unit
            self.index[name], self.labels[name] = j, cell
        missing = [k for k in REQUIRED if k not in self.index]
        if missing:
            raise SteelyardError(f"missing column {missing[0]!r} (required: {', '.join(REQUIRED)})", **where)

    def fail(self, k: int, key: str | None, message: str) -> SteelyardError:
        ident = self.ids[k] if k < len(self.ids) else ""
        subject = f"line {self.lines[k]}" + (f" (item {ident!r})" if ident else "")
        field = f"column {self.labels[key]!r}" if key else None
        return SteelyardError(message, file=self.source, subject=subject, field=field)

    def has(self, key: str) -> bool:
        return key in self.index

    def floats(self, key: str) -> tuple[np.ndarray, np.ndarray]:
        """(values in the column's unit, blank mask); NaN where blank."""
        cells = self.cols[key]
        blank = np.fromiter((c == "" for c in cells), bool, len(cells))
        if self.comma:
            k = next((k for k, c in enumerate(cells) if "." in c), None)
            if k is not None:
                raise self.fail(k, key, f"{cells[k]!r}: with --decimal-comma write a decimal comma "
                                        "and no thousands separator")
            cells = [c.replace(",", ".") for c in cells]
        try:
            vals = np.array([c or "nan" for c in cells], dtype=float)
        except ValueError:
            vals = np.full(len(cells), np.nan)
            for k, c in enumerate(cells):
                try:
                    vals[k] = float(c) if c else np.nan
                except ValueError:
                    hint = " (decimal commas? use --decimal-comma)" if "," in c and not self.comma else ""
                    raise self.fail(k, key, f"must be a bare number, got {c!r}{hint}") from None
        self.reject(key, ~np.isfinite(vals) & ~blank, "must be a finite number, got {cell!r}")
        return vals, blank

    def reject(self, key: str, bad: np.ndarray, message: str) -> None:
        """Raise for the first row where `bad` holds; `{cell}` in the message is its text."""
        if bad.any():
            k = int(np.argmax(bad))
            raise self.fail(k, key, message.format(cell=self.cols[key][k]))

    def si(self, key: str) -> tuple[np.ndarray, np.ndarray]:
        vals, blank = self.floats(key)
        return vals * self.factor[key], blank


def _bool(r: _Reader, k: int, cell: str) -> bool:
    low = cell.lower()
    if low in _TRUE:
        return True
    if low in _FALSE:
        return False
    raise r.fail(k, "variable", f"must be true or false, got {cell!r}")


def _file_value(raw: float, col_unit: str, file_unit: str, dim: str) -> float:
    """A cell value in the ledger's unit: the cell itself when the units agree (exact)."""
    if col_unit == file_unit:
        return float(raw)
    return float(raw) * unit_factor(col_unit, dim) / unit_factor(file_unit, dim)


def _new_units(r: _Reader) -> FileUnits:
    mass, length = r.units["mass"], r.units["x"]
    extra = {"density": r.units["density"]} if r.has("density") else {}
    return FileUnits(mass, length, r.units.get("xx", f"{mass}*{length}**2"), extra)


def _inertia(r: _Reader) -> tuple[np.ndarray, np.ndarray]:
    """(six (n, 6) SI, given (n,)); the three moments are required on a row that gives any."""
    n = len(r.rows)
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
    bad = realisability_problems(tensor_from_six(six[rows])) if rows.size else np.zeros(0, bool)
    if bad.any():
        k = int(rows[np.argmax(bad)])
        raise r.fail(k, "xx" if r.has("xx") else present[0],
                     realisability_problem(tensor_from_six(six[k])) or "not physically possible")
    return six, given


def _fraction(r: _Reader, k: int, cell: str) -> float:
    text = cell.replace(",", ".") if r.comma else cell
    percent = text.endswith("%")
    try:
        f = float(text[:-1] if percent else text) / (100.0 if percent else 1.0)
    except ValueError:
        raise r.fail(k, "growth", f"must be a fraction 0..1 or a percentage, got {cell!r}") from None
    if not 0.0 <= f <= 1.0:
        raise r.fail(k, "growth", f"must lie in 0..1 (0..100 %), got {cell!r}")
    return f


def _other(r: _Reader, k: int, cell: str) -> dict:
    try:
        table = tomllib.loads(f"v = {cell}")["v"]
    except tomllib.TOMLDecodeError:
        table = None
    if not isinstance(table, dict):
        raise r.fail(k, "other", "must be a TOML inline table, e.g. { part = \"A-12\", rev = 3 }")
    clash = sorted(set(table) & (ITEM_KEYS | set(CONTROL_KEYS)))
    if clash:
        raise r.fail(k, "other", f"key {clash[0]!r} has its own column or is a ledger key")
    return table


class _Columns:
    """Every column converted and checked, before any item is built."""

    def __init__(self, r: _Reader, into: Ledger | None, units: FileUnits):
        n = len(r.rows)
        seen: dict[str, int] = {}
        for k, ident in enumerate(r.cols["id"]):
            r.ids[k] = ident
            if not ident:
                raise r.fail(k, "id", "required: a non-empty id")
            if ident in seen:
                raise r.fail(k, "id", f"duplicate id (first on line {r.lines[seen[ident]]})")
            seen[ident] = k
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
        self.variable = [_bool(r, k, c) for k, c in enumerate(r.cols["variable"])] if r.has("variable") else None
        self.six, self.given = _inertia(r)
        self.density = None
        if r.has("density"):
            d, blank = r.si("density")
            r.reject("density", ~blank & ~(d > 0), "must be > 0, got {cell!r}")
            self.density = [None if b else float(x) for x, b in zip(d, blank)]
        if r.has("maturity"):
            table = growth_table(into if into is not None else Ledger())
            for k, c in enumerate(r.cols["maturity"]):
                if c and c not in table:
                    raise r.fail(k, "maturity", f"unknown maturity {c!r} (use one of: {', '.join(table)})")
        self.growth = ([_fraction(r, k, c) if c else None for k, c in enumerate(r.cols["growth"])]
                       if r.has("growth") else None)
        self.tol = self._tolerances(r, units) if any(r.has(c) for c in TOL_COLUMNS) else None
        self.other = ([_other(r, k, c) if c else {} for k, c in enumerate(r.cols["other"])]
                      if r.has("other") else None)

    @staticmethod
    def _tolerances(r: _Reader, units: FileUnits) -> list:
        n = len(r.rows)
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


def _extra(base: Item | None, r: _Reader, cols: _Columns, k: int) -> dict:
    extra = dict(base.extra) if base is not None else {}
    if cols.other is not None:
        extra = {key: v for key, v in extra.items() if key in CONTROL_KEYS}
        extra.update(cols.other[k])
    for key, values in (("maturity", r.cols.get("maturity")), ("growth", cols.growth)):
        if values is not None:
            extra.pop(key, None)
            if values[k] not in (None, ""):
                extra[key] = values[k]
    if cols.tol is not None:
        extra.pop("tolerance", None)
        if cols.tol[k] is not None:
            extra["tolerance"] = cols.tol[k]
    return extra


def _own(base: Item | None, j: int | None, into: Ledger | None, cols: _Columns, r: _Reader, k: int):
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
    return tuple(cols.six_rows[k]), None, ()


def read_csv(text: str, *, source: str, decimal_comma: bool = False, into: Ledger | None = None,
             check: bool = True) -> CsvImport:
    """Build the ledger a CSV describes (alone, or merged `into` an existing ledger); raises on any bad cell.

    Merging: a row whose id exists replaces that item (in place), others are
    appended; a column the CSV does not have leaves that field of an
    existing item as it was. `check=False` leaves the final `check_ledger`
    to the caller (who may add a change-log entry first).
    """
    r = _Reader(text, source, decimal_comma)
    units = into.units if into is not None else _new_units(r)
    cols = _Columns(r, into, units)
    index = into.index if into is not None else {}
    items = list(into.items) if into is not None else []
    added, replaced, same = [], [], []
    mass, cg = cols.mass.tolist(), cols.cg.tolist()
    cols.six_rows = cols.six.tolist()
    for k, ident in enumerate(r.ids):
        j = index.get(ident)
        base = items[j] if j is not None else None
        inertia, shape, rotate = _own(base, j, into, cols, r, k)
        item = Item(
            ident, mass[k], tuple(cg[k]),
            name=r.cols["name"][k] if r.has("name") else (base.name if base else ""),
            group=r.cols["group"][k] if r.has("group") else (base.group if base else ""),
            quantity=cols.quantity[k] if cols.quantity is not None else (base.quantity if base else 1),
            inertia=inertia, shape=shape, rotate=rotate,
            variable=cols.variable[k] if cols.variable is not None else (base.variable if base else False),
            density=cols.density[k] if cols.density is not None else (base.density if base else None),
            extra=_extra(base, r, cols, k),
            given_units=dict(base.given_units) if base else {})
        if j is None:
            items.append(item)
            added.append(ident)
        elif item == base:
            same.append(ident)
        else:
            items[j] = item
            replaced.append(ident)
    ledger = into.evolve(items=tuple(items)) if into is not None else Ledger(tuple(items), units)
    if check:
        check_ledger(ledger, source)
    return CsvImport(ledger, tuple(added), tuple(replaced), tuple(same))


def check_ledger(ledger: Ledger, source: str) -> str:
    """Write the ledger to text and read it back with the full loader: what is saved will open.

    Returns the text, ready to write.
    """
    text = ledger_to_toml(ledger)
    final = ledger_from_data(parse_toml(text, source=source), source=source)
    try:
        growth_fractions(final)
        parse_tolerances(final)
    except SteelyardError as exc:
        raise exc.located(file=source)
    return text


def read_csv_file(path: str, *, decimal_comma: bool = False, into: Ledger | None = None,
                  check: bool = True) -> CsvImport:
    from steelyard.io.ledger.file import read_bytes

    text = decode(read_bytes(path), source=str(path))
    return read_csv(text, source=str(path), decimal_comma=decimal_comma, into=into, check=check)
