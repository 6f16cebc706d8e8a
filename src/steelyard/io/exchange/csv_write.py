"""Items to CSV for spreadsheets: units in the headers, numbers exact on re-import.

Text cells are written as they are, protected against formula evaluation
and quoted where RFC 4180 needs it (csv_cells); a text a CSV file cannot carry
at all (NUL: import refuses the file) stops the export with the item and field.
"""

from __future__ import annotations

import operator
import re
from itertools import repeat

import numpy as np

from steelyard.core.control.growth import growth_fractions
from steelyard.core.control.uncertainty import parse_tolerances
from steelyard.core.display import DisplayUnits
from steelyard.core.document.model import Ledger
from steelyard.core.errors import SteelyardError, item_subject
from steelyard.core.physics.inertia import COMPONENTS, six_from_tensor
from steelyard.core.units import SYSTEMS, unit_factor
from steelyard.io.exchange.csv_cells import (COLUMNS, CONTROL_KEYS, TOL_COLUMNS, number_column, number_text, protect,
                                            quoted, row_text)
from steelyard.io.exchange.csv_model import density_unit, item_more
from steelyard.io.ledger.toml_write import value as toml_value
from steelyard.io.report.control import growth_value, tolerance_si


def _units(ledger: Ledger, system: str | None) -> dict[str, str]:
    du = DisplayUnits.choose(ledger.units, system)
    given = next((it.given_units["density"] for it in ledger.items if "density" in it.given_units), None)
    density = (SYSTEMS[system]["density"] if system in SYSTEMS else
               density_unit(ledger.units) or given or f"{du.mass}/{du.length}**3")
    return {"mass": du.mass, "length": du.length, "inertia": du.inertia, "density": density}


def _text(value: object, ident: str, key: str) -> str:
    text = "" if value is None else str(value)
    if "\x00" in text:
        raise SteelyardError("contains a NUL character, which a CSV file cannot carry (import refuses NUL "
                             "bytes); rename it, or use export --json", subject=item_subject(ident), field=key)
    return protect(text)


_LEADS = frozenset("'=+-@\t\r")  # a first character that may need `protect`


def _cells(values: list[str], sep: str) -> list[str]:
    """`quoted(protect(v))` of every text of a column: the column as it is when a look at all of it
    (what it holds, how its cells start and end) finds nothing to protect or quote, else cell by cell."""
    joined = "".join(values)
    if not (sep in joined or '"' in joined or "\n" in joined or "\r" in joined):
        ends = "".join({v[:1] for v in values}) + "".join({v[-1:] for v in values})
        if not (_LEADS.intersection(ends) or any(map(str.isspace, ends))):
            return values  # nothing in the column to protect or quote
    needs_quotes = re.compile(rf'[{re.escape(sep)}"\n\r]|\A\s|\s\Z').search  # csv_cells._needs_quotes
    out = []
    for v in values:
        if v and v[0] in _LEADS:
            v = protect(v)
        out.append(quoted(v, sep) if needs_quotes(v) else v)
    return out


def _text_columns(items, sep: str) -> list[list[str]]:
    """The id, name and group cells of every item. A NUL stops the export naming the first item
    that holds one, and the field, as the rows meet them."""
    columns = [["" if v is None else str(v) for v in map(operator.attrgetter(key), items)]
               for key in ("id", "name", "group")]
    if any("\x00" in "".join(c) for c in columns):
        for it in items:
            for key in ("id", "name", "group"):
                _text(getattr(it, key), it.id, key)
    return [_cells(c, sep) for c in columns]


def ledger_to_csv(ledger: Ledger, *, system: str | None = None, decimal_comma: bool = False) -> str:
    """Every item as one CSV row; numbers in the file's units (or `system`), exact on re-import.

    Own inertia is per unit about the item's CG in body axes, products as
    integrals (∫xy dm); an item with a shape gets the inertia its shape gives.
    """
    growth_fractions(ledger), parse_tolerances(ledger)  # bad keys stop here, named, not half-written
    items = ledger.items
    extras = [item_more(it) for it in items]
    u = _units(ledger, system)
    keys = ["id", "name", "group", "mass", "x", "y", "z", "quantity", "variable", *COMPONENTS]
    if any(map(operator.is_not, map(operator.attrgetter("density"), items), repeat(None))):
        keys.append("density")
    given = [e for e in extras if e]  # most items have no key beyond v1
    keys += [k for k in ("maturity", "growth") if any(k in e for e in given)]
    if any("tolerance" in e for e in given):
        keys += list(TOL_COLUMNS)
    if any(set(e) - set(CONTROL_KEYS) for e in given):
        keys.append("other")
    header = [f"{k} [{u[COLUMNS[k]]}]" if COLUMNS[k] else k for k in keys]
    f = {k: unit_factor(u[COLUMNS[k]], COLUMNS[k]) for k in keys if COLUMNS[k]}
    six = six_from_tensor(ledger.arrays.own) if items else np.zeros((0, 6))
    sep = ";" if decimal_comma else ","

    def num(k: str, si: float | None) -> str:
        return "" if si is None else number_text(si, f[k], decimal_comma)

    # the number columns a whole column at a time (numbers never need quotes: no separator in them)
    n = len(items)
    a = ledger.arrays
    numbers = [number_column(a.unit_mass, f["mass"], decimal_comma),
               *(number_column(a.cg[:, k], f[c], decimal_comma) for k, c in enumerate("xyz"))]
    own_rows = np.flatnonzero(np.fromiter(map(_has_own, items), bool, n))
    for j, c in enumerate(COMPONENTS):
        column = [""] * n
        for r, text in zip(own_rows.tolist(), number_column(six[own_rows, j], f[c], decimal_comma)):
            column[r] = text
        numbers.append(column)
    tail = keys[len(COMPONENTS) + 9:]  # density, maturity, growth, tolerance, other: as each item has them

    texts = _text_columns(items, sep)
    columns = [*texts, *numbers[:4], list(map(str, map(operator.attrgetter("quantity"), items))),
               ["true" if v else "false" for v in map(operator.attrgetter("variable"), items)], *numbers[4:]]
    rows = list(map(sep.join, zip(*columns)))
    if tail:
        for i, it in enumerate(items):
            e = extras[i]
            cells = {}
            if "density" in keys:
                cells["density"] = num("density", it.density)
            cells["maturity"] = _text(e.get("maturity", ""), it.id, "maturity")
            cells["growth"] = number_text(growth_value(e["growth"]), 1.0, decimal_comma) if "growth" in e else ""
            if "tolerance" in e:
                kind, m, cg = tolerance_si(it, ledger.units)
                cells["tol kind"], cells["tol mass"] = kind, num("tol mass", m)
                for k, c in zip(("tol x", "tol y", "tol z"), cg or (None, None, None)):
                    cells[k] = num(k, c)
            rest = {k: v for k, v in e.items() if k not in CONTROL_KEYS}
            cells["other"] = toml_value(rest) if rest else ""
            rows[i] += sep + sep.join([quoted(cells.get(k, ""), sep) for k in tail])
    return row_text(header, sep) + ("\n".join(rows) + "\n" if rows else "")


def _has_own(it) -> bool:
    return it.inertia is not None or it.shape is not None
