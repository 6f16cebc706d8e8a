"""The one rule for how a number is shown (docs/numbers.md).

Every screen, printout and report shows numbers through here, so the editor,
the CLI and the report agree digit for digit. Pure: text in, text out.

The rule, per kind of quantity:
- mass, inertia, moment: 5 significant figures; integer digits are never
  replaced by zeros (14,123,236 stays 14,123,236).
- length (CG, stations, margins): 5 significant figures of the larger of the
  value and 1 m, so a CG near the datum keeps the same resolution (0.1 mm,
  0.001 in) as one far from it.
- percent: 1 decimal; percent_mac: 2 decimals; fraction (unit vectors,
  ratios): 5 decimals.
A lone value drops trailing zeros ("0.035", "6,280"); a column uses one
count of decimals, chosen for its largest value, so the points line up.
Thousands are separated with commas; a value that shows as zero never has a
minus sign; None and NaN show as an em dash.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence

SIG = 5
#: kind -> (significant figures or None, fixed decimals or None, SI reference magnitude, SI floor)
#: reference: a length is resolved as if it were at least this large (1 m); floor: smaller is zero.
KINDS: dict[str, tuple[int | None, int | None, float, float]] = {
    "mass": (SIG, None, 0.0, 1e-9),
    "inertia": (SIG, None, 0.0, 1e-12),
    "moment": (SIG, None, 0.0, 1e-9),
    "length": (SIG, None, 1.0, 1e-9),
    "percent": (None, 1, 0.0, 0.0),
    "percent_mac": (None, 2, 0.0, 0.0),
    "fraction": (None, 5, 0.0, 0.0),
}
MAX_DECIMALS = 9  # beyond this a value is written with an exponent
HUGE = 1e15  # from here on, an exponent: 16 digits would be float noise
DASH = "—"


def _kind(kind: str) -> tuple[int | None, int | None, float, float]:
    try:
        return KINDS[kind]
    except KeyError:  # programming error, not user input
        raise ValueError(f"unknown kind of number {kind!r}") from None


def _exponent(x: float, sig: int) -> str:
    return f"{x:.{sig - 1}e}"


def decimals_for(magnitude: float, kind: str, factor: float = 1.0) -> int:
    """Decimals that show a value of `magnitude` (display units; `factor` SI per display unit)
    to the kind's resolution. Never negative, at most MAX_DECIMALS."""
    sig, fixed, ref, _ = _kind(kind)
    if fixed is not None:
        return fixed
    m = max(abs(magnitude), ref / factor) if ref else abs(magnitude)
    if not (m > 0) or not math.isfinite(m):
        return 0
    return max(0, min(MAX_DECIMALS, sig - 1 - math.floor(math.log10(m))))


def _is_zero(x: float, kind: str, factor: float) -> bool:
    return abs(x) * factor < _kind(kind)[3]


def fixed(x: float, decimals: int) -> str:
    """`x` with `decimals` decimals and thousands separators, never '-0'."""
    out = f"{x:,.{decimals}f}"
    if out[0] == "-" and not out.strip("-0.,"):
        out = out[1:]
    return out


def _trim(text: str) -> str:
    if "." in text and "e" not in text:
        text = text.rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text


def number(x: float | None, kind: str = "mass", factor: float = 1.0) -> str:
    """One value on its own (a total, a label, a message): the kind's resolution, trailing
    zeros dropped. `x` in display units; `factor` is SI per display unit (for the floor
    under which a value is zero and the reference of lengths)."""
    if x is None or x != x:
        return DASH
    if math.isinf(x):
        return "∞" if x > 0 else "-∞"
    sig, fix, _, _ = _kind(kind)
    if x == 0 or _is_zero(x, kind, factor):
        return "0"
    if abs(x) >= HUGE:
        return _exponent(x, sig or SIG)
    d = decimals_for(x, kind, factor)
    if sig is not None and d >= MAX_DECIMALS and abs(x) < 10.0 ** (sig - 1 - MAX_DECIMALS):
        return _exponent(x, sig)
    return _trim(fixed(x, d))


def column_decimals(values: Iterable[float | None], kind: str, factor: float = 1.0) -> int:
    """One count of decimals for a column: the kind's resolution at its largest value."""
    sig, fix, ref, floor = _kind(kind)
    if fix is not None:
        return fix
    big = 0.0
    for v in values:
        if v is not None and v == v and not math.isinf(v):
            a = abs(v)
            if a > big:
                big = a
    if big * factor < floor and not ref:
        return 0
    return decimals_for(big, kind, factor)


def column(values: Sequence[float | None], kind: str = "mass", factor: float = 1.0,
           decimals: int | None = None) -> list[str]:
    """A column of values: every one with the same decimals (the column's), right-alignable."""
    d = column_decimals(values, kind, factor) if decimals is None else decimals
    sig = _kind(kind)[0] or SIG
    out = []
    for v in values:
        if v is None or v != v:
            out.append(DASH)
        elif math.isinf(v) or abs(v) >= HUGE:
            out.append("∞" if v == math.inf else "-∞" if v == -math.inf else _exponent(v, sig))
        else:
            out.append(fixed(v, d))
    return out


def cell(x: float | None, decimals: int) -> str:
    """One value of a column whose decimals were chosen with column_decimals."""
    if x is None or x != x:
        return DASH
    if math.isinf(x):
        return "∞" if x > 0 else "-∞"
    if abs(x) >= HUGE:
        return _exponent(x, SIG)
    return fixed(x, decimals)
