"""The CSV body laid out by `%` formats: a row template per kind of row, numbers formatted in it.

Joining 16 columns of 100,000 cells costs more than formatting the numbers;
here every row is a template ("%s,%s,%s,%.12g,...") and each block of rows is
one `%` of its joined templates with its rows' values, so a number's text is
written straight into the output. Every row has the same slots (an item without
an own inertia gets "%s" slots with empty cells), so the values go into their
flat tuple a column at a time by slice assignment. A number whose 12-digit
text numpy cannot show to be exact (csv_cells._reads_back) gets its text from
csv_cells.number_column and a "%s" in its row's template instead.
"""

from __future__ import annotations

from collections.abc import Iterator

import numpy as np

from steelyard.io.exchange.csv_cells import _reads_back, number_column
from steelyard.io.exchange.item_columns import interleaved

#: cells before the six inertia cells: id, name, group, mass, x, y, z, quantity, variable
LEAD = 9
#: rows per block of text
BLOCK = 1024


def number_args(si: np.ndarray, factor: float, decimal_comma: bool) -> tuple[list, dict[int, str]]:
    """(value per row for the row template, {row: text} for the rows whose text is given instead).

    Values are floats for a "%.12g" slot, or with `decimal_comma` texts (decimal commas) for "%s":
    either way each cell reads as csv_cells.number_text writes it."""
    si = np.asarray(si, dtype=float)
    if decimal_comma:
        return number_column(si, factor, True), {}
    v = si / factor + 0.0  # + 0.0 turns -0.0 into 0.0, as number_text does
    rest = np.flatnonzero(~_reads_back(v, si, factor))
    texts = number_column(si[rest], factor) if len(rest) else []
    return v.tolist(), dict(zip(rest.tolist(), texts))


def _spread(n: int, rows: np.ndarray, values: list) -> list:
    """n values: `values` at `rows`, "" (an empty cell) elsewhere."""
    out = np.full(n, "", dtype=object)
    out[rows] = np.array(values, dtype=object) if values else []
    return out.tolist()


def body(texts: list[list[str]], numbers: list[tuple[list, dict]], quantity: list, variable: list[str],
         own: np.ndarray, inertia: list[tuple[list, dict]], tail: list[list[str]], *, sep: str,
         decimal_comma: bool) -> Iterator[str]:
    """The rows, each ending in "\\n", a block of BLOCK rows at a time: id, name, group (cells as
    written), mass, x, y, z (`number_args`), quantity (str of each), variable, the six inertia cells of
    the `own` rows (`number_args` of those rows, in order; empty cells elsewhere), then the `tail`
    cells. The caller may encode each block as it comes (no copy of the whole text); a block's values
    and text stay in the processor's caches."""
    n = len(quantity)
    num = "%s" if decimal_comma else "%.12g"
    formats = [*(["%s"] * 3), *([num] * 4), "%s", "%s"]
    after = [sep + "%s"] * len(tail)
    plain = sep.join(formats + ["%s"] * 6) + "".join(after) + "\n"
    with_own = sep.join(formats + [num] * 6) + "".join(after) + "\n"
    rows = own.tolist()
    columns = [*texts, *(a for a, _ in numbers), quantity, variable,
               *(_spread(n, own, a) for a, _ in inertia), *tail]
    templates = [plain] * n
    for r in rows:
        templates[r] = with_own
    fixes: dict[int, dict[int, str]] = {}
    for j, (_, given) in enumerate(numbers):
        for r, text in given.items():
            fixes.setdefault(r, {})[3 + j] = text
    for j, (_, given) in enumerate(inertia):
        for k, text in given.items():
            fixes.setdefault(rows[k], {})[LEAD + j] = text
    for r, slots in fixes.items():  # a number given as text: "%s" in that slot of the row's template
        kinds = formats + [num] * 6 if templates[r] is with_own else formats + ["%s"] * 6
        for s, text in slots.items():
            kinds[s] = "%s"
            columns[s][r] = text  # every column here is a list of its own (`number_args`, `_spread`)
        templates[r] = sep.join(kinds) + "".join(after) + "\n"
    return _blocks(n, columns, templates)


def _blocks(n: int, columns: list[list], templates: list[str]) -> Iterator[str]:
    for start in range(0, n, BLOCK):
        stop = min(n, start + BLOCK)
        yield "".join(templates[start:stop]) % tuple(interleaved(columns, start, stop))
