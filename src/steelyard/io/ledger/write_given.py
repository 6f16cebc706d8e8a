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
    characters besides the sign. Judged a cell at a time, with numpy over the text's bytes.
    """
    if not joined.isascii():
        return None
    joined = "\n" + joined
    b = np.frombuffer(joined.encode("ascii"), np.uint8)
    nl = b == 10
    ends = np.flatnonzero(nl)  # the n + 1 line breaks around the n cells
    n = len(ends) - 1
    width = np.diff(ends) - 1
    sign = b[ends[:-1] + 1] == 45
    short = width - sign <= 15
    if _all_plain(joined):
        return np.ones(n, bool), short
    seg = np.cumsum(nl) - 1  # each byte's cell
    prev = np.concatenate(([10], b[:-1]))
    nxt = np.concatenate((b[1:], [10]))
    digit = (b >= 48) & (b <= 57)
    dot, minus, zero = b == 46, b == 45, b == 48
    first = (prev == 10) | (prev == 45)  # a byte right after the line break or the sign
    bad = (~(digit | dot | minus | nl) | (minus & (prev != 10)) | (dot & (first | (nxt == 10)))
           | (zero & first & (nxt >= 48) & (nxt <= 57)))
    broken = np.zeros(n + 1, bool)
    broken[seg[np.flatnonzero(bad)]] = True
    points = np.bincount(seg[np.flatnonzero(dot)], minlength=n + 1)
    broken |= points > 1
    trailing = np.flatnonzero(zero & (nxt == 10))
    broken[seg[trailing[points[seg[trailing]] > 0]]] = True  # a cell with a point ending in 0
    return ~broken[:n], short


#: a cell's characters, one cell a line; and what breaks the rules across a line or a point
_PLAIN_BYTES = b"0123456789.-\n"
_BROKEN = re.compile(r"\n-?0[0-9]|\.[0-9]*[.]|\.[0-9]*0\n")


def _all_plain(joined: str) -> bool:
    """Whether every cell of `joined` ("\\n" before each cell and after the last; ASCII) is plain, in
    a few passes over the whole text (most columns): `cells` then judges no cell alone."""
    return not (joined.encode("ascii").translate(None, _PLAIN_BYTES) or joined.count("-") != joined.count("\n-")
                or "\n." in joined or "-." in joined or ".\n" in joined or _BROKEN.search(joined))


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
