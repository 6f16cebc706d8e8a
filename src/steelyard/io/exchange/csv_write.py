"""Items to CSV for spreadsheets: units in the headers, numbers exact on re-import.

Text cells are written as they are, protected against formula evaluation
and quoted where RFC 4180 needs it (csv_cells); a text a CSV file cannot carry
at all (NUL: import refuses the file) stops the export with the item and field.
"""

from __future__ import annotations

import re
from collections.abc import Iterable
from itertools import chain, compress, repeat
from operator import is_not

import numpy as np

from steelyard.core.control.growth import growth_fractions
from steelyard.core.control.uncertainty import parse_tolerances
from steelyard.core.display import DisplayUnits
from steelyard.core.document.model import NO_UNITS, Ledger, more_rows
from steelyard.core.errors import SteelyardError, item_subject
from steelyard.core.physics.inertia import COMPONENTS, six_from_tensor
from steelyard.core.units import SYSTEMS, unit_factor
from steelyard.io.exchange.csv_cells import (COLUMNS, CONTROL_KEYS, TOL_COLUMNS, number_column, number_text, protect,
                                            quoted, row_text)
from steelyard.io.exchange.csv_model import density_unit, item_more
from steelyard.io.exchange.csv_rows import body, number_args
from steelyard.io.exchange.item_columns import all_of_type, field, given as given_values, own_at, own_rows
from steelyard.io.report.control import growth_value, tolerance_si


def _units(ledger: Ledger, system: str | None, density: bool) -> dict[str, str]:
    """Column dimension -> unit; the density unit only when there is a density column (finding
    the first unit an item gave its density in looks at the items)."""
    du = DisplayUnits.choose(ledger.units, system)
    u = {"mass": du.mass, "length": du.length, "inertia": du.inertia}
    if density:
        u["density"] = (SYSTEMS[system]["density"] if system in SYSTEMS else
                        density_unit(ledger.units) or _given_density_unit(ledger.items)
                        or f"{du.mass}/{du.length}**3")
    return u


def _given_density_unit(items) -> str | None:
    """The unit the first item that wrote its density with a unit used (items with no unit at
    all share NO_UNITS and are passed over in C)."""
    units = field(items, "given_units")
    return next((g["density"] for g in compress(units, map(is_not, units, repeat(NO_UNITS)))
                 if "density" in g), None)


def _text(value: object, ident: str, key: str) -> str:
    text = "" if value is None else str(value)
    if "\x00" in text:
        raise SteelyardError("contains a NUL character, which a CSV file cannot carry (import refuses NUL "
                             "bytes); rename it, or use export --json", subject=item_subject(ident), field=key)
    return protect(text)


_LEADS = frozenset("'=+-@\t\r")  # a first character that may need `protect`
_STARTS = re.compile(r"\x00['=+\-@\s]")  # after a NUL: a cell starting with such a character or white space
_ENDS = re.compile(r"\x00\s")  # in the reversed column: a cell ending with white space


def _cells(values: list[str], joined: str, sep: str) -> list[str]:
    """`quoted(protect(v))` of every text of a column; `joined` is the column joined with NULs (no
    cell holds one). The column is taken as it is when no cell holds the separator, a quote, CR or
    LF, starts with a character `protect` looks at or with white space, or ends with white space:
    substring scans and two patterns that start with a literal NUL (fast to search) over `joined`
    and its reverse. Else the cells a pattern flags are redone one by one."""
    wrapped = "\x00" + joined + "\x00"
    if not (sep in joined or '"' in joined or "\n" in joined or "\r" in joined
            or _STARTS.search(wrapped) or _ENDS.search(wrapped[::-1])):
        return values  # nothing in the column to protect or quote
    s = re.escape(sep)
    needs_look = re.compile(rf'[{s}"\n\r]|\A[\'=+\-@\s]|\s\Z').search
    needs_quotes = re.compile(rf'[{s}"\n\r]|\A\s|\s\Z').search  # csv_cells._needs_quotes
    out = list(values)
    for i in compress(range(len(values)), map(needs_look, values)):
        v = values[i]
        if v[0] in _LEADS:
            v = protect(v)
        out[i] = quoted(v, sep) if needs_quotes(v) else v
    return out


def _text_columns(items, sep: str) -> list[list[str]]:
    """The id, name and group cells of every item. A NUL stops the export naming the first item
    that holds one, and the field, as the rows meet them."""
    columns, joined = [], []
    for key in ("id", "name", "group"):
        column = field(items, key)
        try:
            text = "\x00".join(column)  # TypeError unless every value is a str
        except TypeError:
            column = ["" if v is None else str(v) for v in column]
            text = "\x00".join(column)
        columns.append(column)
        joined.append(text)
    if any(text.count("\x00") != len(items) - 1 for text in joined):  # a NUL in some cell
        for it in items:
            for key in ("id", "name", "group"):
                _text(getattr(it, key), it.id, key)
    return [_cells(c, text, sep) for c, text in zip(columns, joined)]


def _sparse_column(n: int, rows: np.ndarray, texts: list[str]) -> list[str]:
    """A column of n cells: texts at `rows`, empty elsewhere."""
    column = [""] * n
    for r, text in zip(rows.tolist(), texts):
        column[r] = text
    return column


def ledger_to_csv(ledger: Ledger, *, system: str | None = None, decimal_comma: bool = False) -> str:
    """Every item as one CSV row; numbers in the file's units (or `system`), exact on re-import
    (`csv_parts` joined)."""
    return "".join(csv_parts(ledger, system=system, decimal_comma=decimal_comma))


def csv_parts(ledger: Ledger, *, system: str | None = None, decimal_comma: bool = False) -> Iterable[str]:
    """The CSV text in pieces whose concatenation is the file (the header, then blocks of rows: the
    caller may encode each as it comes). Every check runs before this returns.

    Own inertia is per unit about the item's CG in body axes, products as
    integrals (∫xy dm); an item with a shape gets the inertia its shape gives.
    Every column is built whole (csv_cells.number_column, `_cells`); only the items
    with keys beyond v1 (maturity, growth, tolerance, other) are written cell by cell.
    """
    growth_fractions(ledger), parse_tolerances(ledger)  # bad keys stop here, named, not half-written
    items = ledger.items
    n = len(items)
    more = more_rows(ledger)
    extras = {i: item_more(items[i]) for i in more}
    given = [e for e in extras.values() if e]  # most items have no key beyond v1
    densities = field(items, "density")
    has_density = given_mask = None
    if n:
        given_mask = given_values(densities)
        has_density = bool(given_mask.any())
    keys = ["id", "name", "group", "mass", "x", "y", "z", "quantity", "variable", *COMPONENTS]
    if has_density:
        keys.append("density")
    keys += [k for k in ("maturity", "growth") if any(k in e for e in given)]
    if any("tolerance" in e for e in given):
        keys += list(TOL_COLUMNS)
    if any(set(e) - set(CONTROL_KEYS) for e in given):
        keys.append("other")
    u = _units(ledger, system, bool(has_density))
    header = [f"{k} [{u[COLUMNS[k]]}]" if COLUMNS[k] else k for k in keys]
    f = {k: unit_factor(u[COLUMNS[k]], COLUMNS[k]) for k in keys if COLUMNS[k]}
    sep = ";" if decimal_comma else ","
    if not n:
        return [row_text(header, sep)]

    def num(k: str, si: float | None) -> str:
        return "" if si is None else number_text(si, f[k], decimal_comma)

    # every column built whole (numbers never need quotes: no separator in them), laid out by csv_rows
    a = ledger.arrays
    numbers = [number_args(a.unit_mass, f["mass"], decimal_comma),
               *(number_args(a.cg[:, k], f[c], decimal_comma) for k, c in enumerate("xyz"))]
    rows = own_rows(items)
    six = six_from_tensor(own_at(a, rows))
    inertia = [number_args(six[:, j], f[c], decimal_comma) for j, c in enumerate(COMPONENTS)]
    texts = _text_columns(items, sep)
    quantity = field(items, "quantity")
    variable = list(map(("false", "true").__getitem__, map(bool, field(items, "variable"))))
    tail = keys[len(COMPONENTS) + 9:]  # density, maturity, growth, tolerance, other: as each item has them
    cells = {k: [""] * n for k in tail}
    if has_density:
        at = np.flatnonzero(given_mask)
        values = [densities[i] for i in at.tolist()]
        if all_of_type(values, float):
            cells["density"] = _sparse_column(n, at, number_column(np.array(values), f["density"], decimal_comma))
        else:
            cells["density"] = [num("density", d) for d in densities]
    for i in more if tail else ():
        it, e = items[i], extras[i]
        row = {"maturity": _text(e.get("maturity", ""), it.id, "maturity"),
               "growth": number_text(growth_value(e["growth"]), 1.0, decimal_comma) if "growth" in e else ""}
        if "tolerance" in e:
            kind, m, cg = tolerance_si(it, ledger.units)
            row["tol kind"], row["tol mass"] = kind, num("tol mass", m)
            for k, c in zip(("tol x", "tol y", "tol z"), cg or (None, None, None)):
                row[k] = num(k, c)
        rest = {k: v for k, v in e.items() if k not in CONTROL_KEYS}
        if "cg_table" in rest and u["length"] != ledger.units.length:  # its lengths in the CSV's unit
            from steelyard.io.exchange.csv_cg_table import exported

            rest["cg_table"] = exported(ledger, i, f["x"])
        if rest:
            from steelyard.io.ledger.toml_write import value as toml_value  # here: few ledgers have such keys

            row["other"] = toml_value(rest)
        for k in tail:
            if k != "density":
                cells[k][i] = quoted(row.get(k, ""), sep)
    return chain((row_text(header, sep),), body(texts, numbers, quantity, variable, rows, inertia,
                                                [cells[k] for k in tail], sep=sep, decimal_comma=decimal_comma))
