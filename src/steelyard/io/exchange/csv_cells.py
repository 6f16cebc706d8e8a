"""What one CSV cell may hold, both ways: columns, numbers, text, quoting.

- Numbers are ASCII decimals only. Python's float() also reads "1_5" as 15
  and Arabic-Indic or full-width digits as if they were ASCII, and turns
  "1e-400" into 0 and "1e400" into inf without a word: a spreadsheet cell
  that says any of these is refused, with its line and column.
- Text (id, name, group, maturity) is kept verbatim: spaces are data (RFC 4180:
  "Spaces are considered part of a field and should not be ignored").
- A text cell that a spreadsheet would run as a formula (first character
  = + - @ TAB or CR, the OWASP CSV-injection list) is written with a leading
  apostrophe; see `protect` for the rule that makes this reversible.
- A cell is quoted (RFC 4180 §2.6-2.7) when it holds the separator, a quote,
  CR or LF, or starts or ends with white space.
"""

from __future__ import annotations

import math
import operator
import re
from itertools import compress

import numpy as np

from steelyard.core.physics.inertia import COMPONENTS
from steelyard.core.units import NUMBER

#: column key -> dimension of its numbers (None: no unit), in export order
COLUMNS: dict[str, str | None] = {
    "id": None, "name": None, "group": None, "mass": "mass", "x": "length", "y": "length", "z": "length",
    "quantity": None, "variable": None, **{c: "inertia" for c in COMPONENTS}, "density": "density",
    "maturity": None, "growth": None, "tol kind": None, "tol mass": "mass", "tol x": "length",
    "tol y": "length", "tol z": "length", "other": None,
}
REQUIRED = ("id", "mass", "x", "y", "z")
#: columns whose cells are free text: verbatim, formula-protected
TEXT_COLUMNS = ("id", "name", "group", "maturity")
CONTROL_KEYS = ("maturity", "growth", "tolerance")
TOL_COLUMNS = ("tol kind", "tol mass", "tol x", "tol y", "tol z")
HEADER = re.compile(r"^(?P<name>[^\[\]]*?)\s*(?:\[(?P<unit>[^\[\]]*)\])?$")
SI_UNIT = {"mass": "kg", "length": "m", "inertia": "kg*m**2", "density": "kg/m**3"}
TRUE, FALSE = {"true", "yes", "y", "1"}, {"false", "no", "n", "0", ""}

# ------------------------------------------------------------------------------ text cells

#: first characters a spreadsheet may take as the start of a formula (OWASP, CSV injection)
FORMULA_LEAD = "=+-@\t\r"
_NEEDS_GUARD = re.compile(r"'*[=+\-@\t\r]")
_GUARDED = re.compile(r"'+[=+\-@\t\r]")


def protect(text: str) -> str:
    """Text as written to a cell: one apostrophe more in front when, after any apostrophes
    it already starts with, its first character is one of = + - @ TAB CR.

    "=SUM(A1)" -> "'=SUM(A1)", "'=x" -> "''=x", "'quoted'" unchanged: `unprotect`
    inverts it for every text, so export then import gives the text back.
    """
    return "'" + text if _NEEDS_GUARD.match(text) else text


def unprotect(cell: str) -> str:
    """The text a cell stands for: one leading apostrophe removed where `protect` adds one."""
    return cell[1:] if _GUARDED.match(cell) else cell


def _needs_quotes(cell: str, sep: str) -> bool:
    return (sep in cell or '"' in cell or "\n" in cell or "\r" in cell
            or (cell != "" and (cell[0].isspace() or cell[-1].isspace())))


def quoted(cell: str, sep: str) -> str:
    """One cell as written: quoted (quotes doubled) where RFC 4180 needs it."""
    return '"' + cell.replace('"', '""') + '"' if _needs_quotes(cell, sep) else cell


def row_text(cells: list[str], sep: str) -> str:
    """One CSV record (RFC 4180): quoted where needed, quotes doubled, "\\n" at the end."""
    return sep.join('"' + c.replace('"', '""') + '"' if _needs_quotes(c, sep) else c for c in cells) + "\n"


# ------------------------------------------------------------------------------ number cells

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


#: 10**k for k = 0..22, each exact in a float (int -> float conversion is exact below 2**53 * 2**k)
_POW10 = np.array([float(10 ** k) for k in range(23)])


def _reads_back(v: np.ndarray, si: np.ndarray, factor: float) -> np.ndarray:
    """(n,) bool, True where t = f"{v:.12g}" is known to pass `number_text`'s first test,
    float(t) * factor == si, shown without formatting or parsing t.

    With e the decimal exponent of v and k = 11 - e, t holds the digits of q, the integer
    nearest the exact v·10**k (10**11 <= |q| < 10**12), so float(t) is q / 10**k correctly
    rounded: exactly what the float division of q by 10**k (both exact, k <= 22) gives.
    v * 10**k is computed with an error below 2**-14 (|product| < 2**40), so when it lies
    less than 0.499 from q, q is that nearest integer. False is only "not shown": the
    caller then formats and parses."""
    with np.errstate(all="ignore"):
        a = np.abs(v)
        k = 11.0 - np.floor(np.log10(np.where(a == 0.0, 1.0, a)))
        fits = (k >= 0.0) & (k <= 22.0)  # NaN and inf drop out here
        scale = _POW10[np.where(fits, k, 0.0).astype(np.intp)]
        p = v * scale
        q = np.rint(p)
        twelve = ((np.abs(q) >= 1e11) & (np.abs(q) < 1e12)) | (a == 0.0)  # 0 is written "0"
        return fits & twelve & (np.abs(p - q) < 0.499) & ((q / scale) * factor == si)


def number_column(si: np.ndarray, factor: float, decimal_comma: bool = False) -> list[str]:
    """`number_text` of every value of `si`, the same texts: the common case (12 significant
    digits multiply back exactly) in one formatting pass, checked with numpy (`_reads_back`);
    the rest parsed back, then number_text's ladder (15, 16, 17 digits) a step at a time for
    all the values still left, and only those no digit count fits one by one."""
    si = np.asarray(si, dtype=float)
    v = si / factor + 0.0
    texts = (("%.12g\n" * len(v)) % tuple(v.tolist())).split("\n")[:-1]  # one C call: f"{x:.12g}" each
    rest = np.flatnonzero(~_reads_back(v, si, factor))
    for digits in (12, 15, 16, 17):  # number_text's ladder, each step for all the values still left
        if not len(rest):
            break
        if digits == 12:
            tried = [texts[i] for i in rest.tolist()]
        else:
            tried = (f"%.{digits}g\n" * len(rest) % tuple(v[rest].tolist())).split("\n")[:-1]
        back = np.fromiter(map(float, tried), float, len(rest))
        hit = back * factor == si[rest]
        for i, text in zip(rest[hit].tolist(), compress(tried, hit.tolist())):
            texts[i] = text
        rest = rest[~hit]
    for i in rest.tolist():  # no digit count multiplies back exactly: number_text looks at the neighbours
        texts[i] = number_text(float(si[i]), factor)
    if decimal_comma:
        texts = "\n".join(texts).replace(".", ",").split("\n")
    return texts


_CELL = re.compile(NUMBER)
_COLUMN = re.compile(rf"(?:(?:{NUMBER})?\n)*")
_NONZERO = re.compile(r"[1-9]")


def cell_problem(cell: str, decimal_comma: bool) -> str | None:
    """Why a (stripped) number cell is not a plain ASCII decimal, or None."""
    work = cell.replace(",", ".") if decimal_comma else cell
    if decimal_comma and "." in cell:
        return f"{cell!r}: with --decimal-comma write a decimal comma and no thousands separator"
    if work == "" or _CELL.fullmatch(work):
        return None
    if work.lower().lstrip("+-") in ("nan", "inf", "infinity"):
        return f"must be a finite number, got {cell!r}"
    hint = " (decimal commas? use --decimal-comma)" if "," in cell and not decimal_comma else ""
    return f"must be a bare number in ASCII digits, got {cell!r}{hint}"


#: the characters of a column of number cells, one a line: any other character sends it to the pattern
_NUMBER_BYTES = b"0123456789.+-eE\n"


def _bare_floats(joined: str, work: list[str], blank: np.ndarray, n: int) -> np.ndarray | None:
    """The column's values (NaN where blank) when its text, one cell a line, holds only the characters of
    `NUMBER` and float() reads every cell; else None.

    Over those characters, float() and `NUMBER` accept the same strings (float's other spellings need
    an underscore, a letter, a space or a non-ASCII digit), and one C pass over the bytes rules the
    rest out: no per-cell pattern match. `joined` must have `n` lines, so no cell holds a line break.
    """
    if not joined.isascii() or joined.encode("ascii").translate(None, _NUMBER_BYTES) or joined.count("\n") != n:
        return None
    try:
        if not blank.any():
            return np.fromiter(map(float, work), float, n)
        vals = np.full(n, np.nan)
        # the text holds no white space but its line breaks: split() gives the non-blank cells, in order
        vals[~blank] = np.fromiter(map(float, joined.split()), float)
    except ValueError:  # "1e", "+", "1.2.3": the pattern refuses them too
        return None
    return vals


def _blanks(lines: str, n: int) -> np.ndarray:
    """(n,) bool: which of the `n` cells of `lines` (each ending "\\n", none holding one) are empty."""
    if not lines.startswith("\n") and "\n\n" not in lines:
        return np.zeros(n, bool)
    if lines.isascii():
        ends = np.flatnonzero(np.frombuffer(lines.encode("ascii"), np.uint8) == 10)
        return np.diff(ends, prepend=-1) == 1
    return np.fromiter(map(operator.not_, lines.split("\n")), bool, n + 1)[:n]


def parse_cells(cells: list[str], decimal_comma: bool, lines: str | None = None
                ) -> tuple[np.ndarray, np.ndarray, int | None, str]:
    """(values, blank mask, first bad row or None, why) for a column of stripped cells.

    `lines`: the caller's `"\\n".join(cells) + "\\n"`, if it has it.

    One regular-expression pass checks the whole column; numpy then converts it. A
    literal that is not zero but reads as 0.0 (underflow) or that reads as inf is bad.
    Messages quote the cell as written.
    """
    n = len(cells)
    if lines is not None and not decimal_comma and lines.count("\n") == n:
        blank = _blanks(lines, n)
    else:
        blank = np.fromiter(map(operator.not_, cells), bool, n) if "" in cells else np.zeros(n, bool)
    work = cells
    if decimal_comma:
        dot = next((k for k, c in enumerate(cells) if "." in c), None)
        if dot is not None:
            return np.full(n, np.nan), blank, dot, cell_problem(cells[dot], True) or ""
        work = [c.replace(",", ".") for c in cells]
    joined = lines if lines is not None and work is cells else "\n".join(work) + "\n"
    vals = _bare_floats(joined, work, blank, n)
    if vals is None:  # some cell is not plain ASCII digits: the full pattern says which, and why
        if joined.count("\n") != n or not _COLUMN.fullmatch(joined):
            k = next(k for k, c in enumerate(cells) if "\n" in c or cell_problem(c, decimal_comma))
            return np.full(n, np.nan), blank, k, (cell_problem(cells[k], decimal_comma)
                                                  or f"must be a bare number, got {cells[k]!r}")
        vals = np.array([c or "nan" for c in work], dtype=float)
    big = np.isinf(vals)
    if big.any():
        k = int(np.argmax(big))
        return vals, blank, k, f"{cells[k]!r} is too large to represent"
    for k in np.flatnonzero(vals == 0.0).tolist():
        if _NONZERO.search(work[k].lower().partition("e")[0]):
            return vals, blank, k, f"{cells[k]!r} is too small to represent (it would read as 0)"
    return vals, blank, None, ""
