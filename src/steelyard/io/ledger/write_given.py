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

import re

import numpy as np

from steelyard.io.ledger.toml_write import _SHORT_HI

#: `numbers` settles |x| and |x / factor| from this size up with one rounding (write_items._BULK_LO)
_BULK_LO = 1e-290
#: below this size "%.14g" writes an exponent
_POSITIONAL_LO = 1e-4
#: a cell's characters, one cell a line
_PLAIN_BYTES = b"0123456789.-\n"
_LEADING_ZERO = re.compile(r"\n-?0[0-9]")
_TWO_POINTS = re.compile(r"\.[0-9]*\.")
_TRAILING_ZERO = re.compile(r"\.[0-9]*0\n")
#: how far (in ulps of the cell's value) x / factor may lie from it; see `given_texts`
_NEAR_ULPS = 4


def canonical(texts: list[str]) -> np.ndarray | None:
    """(n,) bool: each text is a decimal as printf's "%.14g" writes it, with at most 14 significant
    digits; None when some text breaks a rule the whole column is checked against at once.

    The column, one cell a line, must hold only ASCII digits, '.', '-' and line breaks; a '-' only
    first in a cell; no point first (after the sign) or last, nor two points; no leading zero before
    a digit; no trailing zero after the point; and no exponent. Such a cell is "" or "-", or matches
    -?(0|[1-9][0-9]*)(\\.[0-9]*[1-9])? : what %g prints. A cell is then marked True when it holds at
    most 15 characters besides its sign (so a point and <= 14 digits, or a whole number; the caller
    checks sizes).
    """
    if not texts:
        return np.zeros(0, bool)
    joined = "\n" + "\n".join(texts) + "\n"
    if (not joined.isascii() or joined.encode("ascii").translate(None, _PLAIN_BYTES)
            or joined.count("-") != joined.count("\n-") or "\n." in joined or "-." in joined or ".\n" in joined
            or _LEADING_ZERO.search(joined) or _TWO_POINTS.search(joined) or _TRAILING_ZERO.search(joined)):
        return None
    raw = np.frombuffer(joined.encode("ascii"), np.uint8)
    ends = np.flatnonzero(raw == 10)  # the n + 1 line breaks around the n cells
    width = np.diff(ends) - 1
    sign = raw[ends[:-1] + 1] == ord("-")
    return width - sign <= 15


def given_texts(a: np.ndarray, factor: float, texts: list[str], values: np.ndarray
                ) -> tuple[list[str | None], np.ndarray]:
    """(texts, rest): `number(a[i], factor)` where a given text is shown to be it, None elsewhere;
    rest is the indices left to spell. `values[i]` must be `float(texts[i])` (the caller parsed them).

    A text t is `number(x, factor)` when: t is canonical (`canonical`), c = float(t)
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
    plain = canonical(texts) if ok.any() else None
    if plain is None:
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
