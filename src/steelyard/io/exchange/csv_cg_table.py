"""A tank's `cg_table` in a CSV's `other` cell, in the CSV's length unit (that of its x, y, z headers).

A ledger holds a table's lengths as written: bare numbers in its [units]
length, or strings with their own unit. In a CSV whose lengths are in
another unit (`export --units`), bare numbers in the file's unit would be
read in the CSV's and move the tank's CG by the ratio of the two units, so
the export writes every length of the table in the CSV's unit, and an
import into a ledger of another unit (`import --into`) writes them in that
ledger's unit. Each number is the shortest text that scales back to the
same metres (csv_cells.number_text), so a table survives a round trip
between two units digit for digit wherever such a text exists. A string
with a unit means the same in any file and stays as written.
"""

from __future__ import annotations

from steelyard.core.document.model import Ledger
from steelyard.core.loading.tank import tank_tables
from steelyard.io.exchange.csv_cells import number_text

_NUMBERS = (int, float)


def exported(ledger: Ledger, row: int, factor: float) -> list[list[float]]:
    """Item `row`'s table (checked: core.loading.tank) with lengths in the unit of `factor` (m per unit)."""
    t = tank_tables(ledger)[row]
    return [[float(f), *(float(number_text(c, factor)) for c in cg)] for f, cg in zip(t.fraction.tolist(),
                                                                                    t.cg.tolist())]


def rescaled(table, from_factor: float, to_factor: float):
    """A table as a CSV gave it (lengths in the unit of `from_factor`), bare lengths re-expressed in the
    unit of `to_factor`. Anything that is not a row of numbers is left for the ledger reader to word."""
    if type(table) is not list:
        return table
    out = []
    for r in table:
        if type(r) is list and len(r) == 4:
            r = [r[0], *(float(number_text(v * from_factor, to_factor)) if type(v) in _NUMBERS else v
                         for v in r[1:])]
        out.append(r)
    return out
