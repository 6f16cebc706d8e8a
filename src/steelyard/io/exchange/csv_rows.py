"""The CSV body laid out by one `%` format: one row template per kind of row, numbers formatted in it.

Joining 16 columns of 100,000 cells costs more than formatting the numbers;
here every row is a template ("%s,%s,%s,%.12g,...") and the whole body is one
`%` of the joined templates with every row's values, so a number's text is
written straight into the output. A number whose 12-digit text numpy cannot
show to be exact (csv_cells._reads_back) gets its text from
csv_cells.number_column and a "%s" in its row's template instead.
"""

from __future__ import annotations

from itertools import chain
from operator import add

import numpy as np

from steelyard.io.exchange.csv_cells import _reads_back, number_column


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


def body(texts: list[list[str]], numbers: list[tuple[list, dict]], quantity: list, variable: list[str],
         own: np.ndarray, inertia: list[tuple[list, dict]], tail: list[list[str]], *, sep: str,
         decimal_comma: bool) -> str:
    """The rows, each ending in "\\n": id, name, group (cells as written), mass, x, y, z (`number_args`),
    quantity (str of each), variable, the six inertia cells of the `own` rows (`number_args` of those
    rows, in order; empty cells elsewhere), then the `tail` cells."""
    n = len(quantity)
    num = "%s" if decimal_comma else "%.12g"
    lead = [*(["%s"] * 3), *([num] * 4), "%s", "%s"]
    after = "".join([sep + "%s"] * len(tail)) + "\n"
    plain = sep.join(lead) + sep * 6 + after
    with_own = sep.join(lead + [num] * 6) + after
    templates = [plain] * n
    args = list(zip(*texts, *(a for a, _ in numbers), quantity, variable, *tail))
    rows = own.tolist()
    if rows:
        at = len(lead)  # where the inertia values go in a row's values
        six = list(zip(*(a for a, _ in inertia)))
        if tail:
            extended = [r[:at] + s + r[at:] for r, s in zip(map(args.__getitem__, rows), six)]
        else:
            extended = list(map(add, map(args.__getitem__, rows), six))
        for r, values in zip(rows, extended):
            templates[r] = with_own
            args[r] = values
    fixes: dict[int, dict[int, str]] = {}
    for j, (_, given) in enumerate(numbers):
        for r, text in given.items():
            fixes.setdefault(r, {})[3 + j] = text
    for j, (_, given) in enumerate(inertia):
        for k, text in given.items():
            fixes.setdefault(rows[k], {})[len(lead) + j] = text
    for r, slots in fixes.items():  # a number given as text: "%s" in that slot of the row's template
        formats = (lead + [num] * 6) if templates[r] is with_own else lead
        formats = [("%s" if s in slots else f) for s, f in enumerate(formats)]
        values = list(args[r])
        for s, text in slots.items():
            values[s] = text
        inner = sep.join(formats) if templates[r] is with_own else sep.join(formats) + sep * 6
        templates[r] = inner + after
        args[r] = tuple(values)
    return "".join(templates) % tuple(chain.from_iterable(args))
