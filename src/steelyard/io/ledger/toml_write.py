"""Small, deterministic TOML writer: values, and tables placed where TOML reads them back.

The ledger writer needs control over table order and number text, so values
are formatted here. `table_blocks` writes a table with every plain key before
any sub-table and every array of tables as `[[path]]` headers: a table written
after another table's header is read as part of it, which is how a generic
dump once turned a `[[limit]]` into a key of the last envelope.
"""

from __future__ import annotations

import datetime as _dt
import math
import re

import tomli_w

_BARE_KEY = re.compile(r"[A-Za-z0-9_-]+")  # whole key (fullmatch: `$` would let a final "\n" through)
_ESCAPES = {'"': '\\"', "\\": "\\\\", "\b": "\\b", "\t": "\\t", "\n": "\\n", "\f": "\\f", "\r": "\\r"}


def key(k: str) -> str:
    return k if _BARE_KEY.fullmatch(k) else string(k)


#: characters a TOML basic string cannot hold as themselves (TOML v1.0.0, "String"): the quote, the
#: backslash and the control characters U+0000-U+001F and U+007F (tab too: escaped, though it may stay)
_NEEDS_ESCAPE = re.compile(r'["\\\x00-\x1f\x7f]')


def _escape(m: re.Match) -> str:
    ch = m.group()
    return _ESCAPES.get(ch) or f"\\u{ord(ch):04x}"


def string(s: str) -> str:
    """A TOML basic string. One regex pass finds what needs escaping; most text needs none."""
    if _NEEDS_ESCAPE.search(s) is None:
        return '"' + s + '"'
    return '"' + _NEEDS_ESCAPE.sub(_escape, s) + '"'


#: `number` skips the full search for |x / factor| in this range (positional notation, see `_short`)
_SHORT_LO, _SHORT_HI = 1e-3, 1e13


def number(x: float, factor: float = 1.0) -> str:
    """Text t for x in a unit of size `factor` (SI per unit), read back as float(t) * factor.

    Chosen so that saving is a fixed point (save, load, save gives the same
    bytes): among the floats next to x / factor and the short decimal
    roundings of it, take one that reads back to exactly x, else one within
    one unit in the last place of x, else the nearest; the shortest text wins
    within each rank. A value that came from the file in this unit is always
    written back as it was read.

    In the file's own SI unit (factor 1) that is Python's repr, the shortest
    text that reads back to the same float. Otherwise `_short` answers the
    usual case (a value typed in this unit) with one rounding; the full
    search (`_search`) runs only when it cannot.
    """
    if isinstance(x, int) and not isinstance(x, bool) and factor == 1.0:
        return str(x)
    x = float(x)
    if factor == 1.0:
        return repr(x)  # finite: always has '.' or 'e'; nan, inf, -inf as TOML spells them
    if not math.isfinite(x):
        return "nan" if math.isnan(x) else ("inf" if x > 0 else "-inf")
    v = x / factor
    # Why one rounding gives the search's answer: every float c that reads back exactly
    # (c * factor == x) lies within about two units in the last place (ulp) of v. Two floats
    # whose shortest texts have <= 14 significant digits are >= 1e-14 of their size apart, far
    # more than four ulps (2.2e-16 of it each): so at most one exact candidate has a text of
    # <= 14 digits, and its decimal is the 14-digit rounding of v (within a few ulps of v; the
    # 14-digit spacing is far wider). When that rounding reads back exactly it is a candidate
    # of the search (v rounded to its own number of digits) and every other exact candidate
    # has 15 digits or more: in positional notation (1e-3 <= |v| < 1e13, at most 13 integer
    # digits), a longer text. tests/test_toml_write_fast.py compares the two on random values.
    if _SHORT_LO <= abs(v) < _SHORT_HI:
        c = float(f"{v:.14g}")
        if c * factor == x:
            return repr(c)
    elif x == 0.0:
        return repr(v)  # the search's answer: "0.0" or "-0.0" beats any subnormal's text
    return _search(x, v, factor)


def _search(x: float, v: float, factor: float) -> str:
    candidates = {float(f"{v:.{d}g}") for d in range(6, 18)}
    up = down = v
    candidates.add(v)
    for _ in range(3):
        up, down = math.nextafter(up, math.inf), math.nextafter(down, -math.inf)
        candidates.update((up, down))
    one_ulp = math.ulp(x)

    def rank(c: float) -> tuple:
        err = abs(c * factor - x)
        grade = 0 if err == 0 else (1 if err <= one_ulp else 2)
        text = _float_text(c)
        return (grade, err if grade == 2 else 0.0, len(text), text)

    return min((rank(c) for c in candidates if math.isfinite(c)), default=(0, 0, 0, _float_text(v)))[3]


def _float_text(c: float) -> str:
    text = repr(c)
    if "e" not in text and "." not in text and "n" not in text:
        text += ".0"
    return text


def value(v: object) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        return number(v)
    if isinstance(v, str):
        return string(v)
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{ " + ", ".join(f"{key(k)} = {value(x)}" for k, x in v.items()) + " }" if v else "{}"
    if isinstance(v, (_dt.datetime, _dt.date, _dt.time)):
        return tomli_w.dumps({"v": v}).split("=", 1)[1].strip()
    raise TypeError(f"cannot write {type(v).__name__} to TOML")


def is_table_array(v: object) -> bool:
    """A non-empty list of tables: written as [[path]] headers."""
    return isinstance(v, (list, tuple)) and bool(v) and all(isinstance(x, dict) for x in v)


def table_blocks(path: str, table: dict, *, array: bool = False) -> list[list[str]]:
    """`table` under header `path` (already key-quoted): plain keys first, then sub-tables in order."""
    lines = [f"[[{path}]]" if array else f"[{path}]"]
    subs: list[list[str]] = []
    for k, v in table.items():
        sub = f"{path}.{key(k)}"
        if isinstance(v, dict):
            subs.extend(table_blocks(sub, v))
        elif is_table_array(v):
            for entry in v:
                subs.extend(table_blocks(sub, entry, array=True))
        else:
            lines.append(f"{key(k)} = {value(v)}")
    return [lines] + subs


def tables(data: dict) -> str:
    """Whole top-level tables, each as its header (arrays of tables as [[name]])."""
    blocks: list[list[str]] = []
    for k, v in data.items():
        if isinstance(v, dict):
            blocks.extend(table_blocks(key(k), v))
        elif is_table_array(v):
            for entry in v:
                blocks.extend(table_blocks(key(k), entry, array=True))
        else:
            raise TypeError(f"top-level {k!r} is not a table")
    return "\n\n".join("\n".join(b) for b in blocks) + "\n" if blocks else ""
