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

_BARE_KEY = re.compile(r"^[A-Za-z0-9_-]+$")
_ESCAPES = {'"': '\\"', "\\": "\\\\", "\b": "\\b", "\t": "\\t", "\n": "\\n", "\f": "\\f", "\r": "\\r"}


def key(k: str) -> str:
    return k if _BARE_KEY.match(k) else string(k)


def string(s: str) -> str:
    out = []
    for ch in s:
        if ch in _ESCAPES:
            out.append(_ESCAPES[ch])
        elif ord(ch) < 0x20 or ord(ch) == 0x7F:
            out.append(f"\\u{ord(ch):04x}")
        else:
            out.append(ch)
    return '"' + "".join(out) + '"'


def number(x: float, factor: float = 1.0) -> str:
    """Text t for x in a unit of size `factor` (SI per unit), read back as float(t) * factor.

    Chosen so that saving is a fixed point (save, load, save gives the same
    bytes): among the floats next to x / factor and the short decimal
    roundings of it, take one that reads back to exactly x, else one within
    one unit in the last place of x, else the nearest; the shortest text wins
    within each rank. A value that came from the file in this unit is always
    written back as it was read.
    """
    if isinstance(x, int) and not isinstance(x, bool) and factor == 1.0:
        return str(x)
    x = float(x)
    if not math.isfinite(x):
        return "nan" if math.isnan(x) else ("inf" if x > 0 else "-inf")
    if factor == 1.0:
        return _float_text(x)
    v = x / factor
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
