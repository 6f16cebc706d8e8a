"""Numbers whose text the caller already has: a cell that says exactly what `toml_write.number` writes.

An import writes back, in the same unit, the numbers a CSV just gave: most
cells already are the text the writer would choose (its shortest, 14-digit
rounding). Spelling them anew costs a formatting and a parse per number;
here a cell is taken as it is when it is shown, with numpy over the column,
to be that text (see `given_texts`). Anything not shown goes through
`write_items.numbers` as before, so the bytes are the same either way
(tests/test_write_given.py).
"""

from __future__ import annotations

import numpy as np

from steelyard.io.ledger.toml_write import _SHORT_HI

#: `numbers` settles |x| and |x / factor| from this size up with one rounding (write_items._BULK_LO)
_BULK_LO = 1e-290
#: below this size "%.14g" writes an exponent
_POSITIONAL_LO = 1e-4
#: how far (in ulps of the cell's value) x / factor may lie from it; see `given_texts`
_NEAR_ULPS = 4


def canonical(texts: list[str]) -> np.ndarray | None:
    """(n,) bool: each text is a decimal as printf's "%.14g" writes it, with at most 14 significant
    digits; None when some text breaks a rule (see `cells`).

    Such a text is "" or "-", or matches -?(0|[1-9][0-9]*)(\\.[0-9]*[1-9])? : what %g prints. A
    text is then marked True when it holds at most 15 characters besides its sign (so a point
    and <= 14 digits, or a whole number; the caller checks sizes).
    """
    if not texts:
        return np.zeros(0, bool)
    got = cells("\n".join(texts) + "\n")
    if got is None or not got[0].all():
        return None
    return got[1]


def cells(joined: str) -> tuple[np.ndarray, np.ndarray] | None:
    """(plain, short) for the cells of `joined` (one a line, each ending "\\n"), each (n,) bool; None
    when the text is not ASCII.

    plain: the cell is "" or "-", or -?(0|[1-9][0-9]*)(\\.[0-9]*[1-9])? : only ASCII digits, '.' and
    '-'; a '-' only first; no point first (after the sign) or last, nor two points; no leading
    zero before a digit; no trailing zero after the point; no exponent. short: at most 15
    characters besides the sign. Judged a cell at a time, with numpy: over each cell's first and
    last characters, and over the few kinds of byte that may break a rule inside one.
    """
    if not joined.isascii():
        return None
    b = np.frombuffer(("\n" + joined).encode("ascii"), np.uint8)
    ends = np.flatnonzero(b == 10)  # the n + 1 line breaks around the n cells
    n = len(ends) - 1
    start, stop = ends[:-1] + 1, ends[1:]  # cell i is b[start[i]:stop[i]]
    sign = b[start] == 45  # (an empty cell's "first" byte is the next line break)
    first = start + sign  # the first byte after the sign (stop when there is none)
    lead, last = b[first], b[stop - 1]  # (a line break where the cell has no such byte)
    after = b[np.minimum(first + 1, len(b) - 1)]
    broken = ((lead == 46) | (last == 46)  # a point first (after the sign) or last
              | ((lead == 48) & (stop - first >= 2) & (after >= 48) & (after <= 57)))  # a leading zero
    cell = ends.searchsorted  # a byte's cell: the line breaks before it, less one
    odd = np.flatnonzero(_OTHER[b])  # a byte that is none of 0-9 . - and the line break
    minus = np.flatnonzero(b == 45)
    broken[cell(odd) - 1] = True
    broken[cell(minus[b[minus - 1] != 10]) - 1] = True  # a '-' not first
    points = cell(np.flatnonzero(b == 46)) - 1
    broken[points[1:][points[1:] == points[:-1]]] = True  # two points in one cell
    dotted = np.zeros(n, bool)
    dotted[points] = True
    broken |= dotted & (last == 48)  # a trailing zero after the point
    return ~broken, stop - start - sign <= 15


#: the bytes that may not stand in a plain cell: all but 0-9 . - and the line break
_OTHER = np.ones(256, bool)
_OTHER[list(b"0123456789.-\n")] = False


def given_texts(a: np.ndarray, factor: float, texts: list[str], values: np.ndarray,
                plain: np.ndarray | None = None) -> tuple[list[str | None], np.ndarray]:
    """(texts, rest): `number(a[i], factor)` where a given text is shown to be it, None elsewhere;
    rest is the indices left to spell. `values[i]` must be `float(texts[i])` (the caller parsed them).

    `plain`: the texts' `cells` (plain & short), if the caller has them.

    A text t is `number(x, factor)` when: t is plain and short (`cells`), c = float(t)
    reads back exactly (c * factor == x), and v = x / factor lies within 4 ulps of c,
    in `numbers`' one-rounding range. Then t, with <= 14 significant digits, is c's
    decimal to within half an ulp; 14-digit decimals lie >= 1e-14 of their size
    apart (> 20 ulps either side), so v's 14-digit rounding is t's digits, and its
    exponent (that of t, >= 1e-4 and < 1e13) keeps "%.14g" positional: "%.14g" % v
    is t, which `numbers` (as `number`) takes since it reads back exactly; a whole
    number gets ".0" as there.
    """
    n = len(a)
    if n == 0 or len(texts) != n or len(values) != n:  # (texts not one per number: none taken)
        return [None] * n, np.arange(n)
    c = np.asarray(values, dtype=float)
    with np.errstate(all="ignore"):
        v = a / factor
        av = np.abs(v)
        ok = ((c * factor == a) & (np.abs(v - c) <= _NEAR_ULPS * np.spacing(np.abs(c)))
              & (av >= _BULK_LO) & (av < _SHORT_HI) & (np.abs(a) >= _BULK_LO) & (np.abs(c) >= _POSITIONAL_LO))
    if plain is None and ok.any():
        got = cells("\n".join(texts) + "\n")
        plain = None if got is None else got[0] & got[1]
    if plain is None or len(plain) != n:
        return [None] * n, np.arange(n)
    ok &= plain
    out: list[str | None] = list(texts)
    # a whole number has no point in its text (a point is followed by a digit other than 0, which
    # no float of <= 14 significant digits below 1e13 loses), and `numbers` adds ".0" to it
    for i in np.flatnonzero(ok & (c == np.floor(c))).tolist():
        out[i] += ".0"
    rest = np.flatnonzero(~ok)
    for i in rest.tolist():
        out[i] = None
    return out, rest
