"""Small, deterministic TOML value writer.

tomli-w writes whole documents; the ledger writer needs control over table
order and number text, so values are formatted here and whole unknown tables
are delegated to tomli-w.
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
    """Shortest text for x_si/factor that reads back (times factor) to exactly x_si."""
    if isinstance(x, int) and not isinstance(x, bool) and factor == 1.0:
        return str(x)
    x = float(x)
    if not math.isfinite(x):
        return "nan" if math.isnan(x) else ("inf" if x > 0 else "-inf")
    v = x / factor
    # Up to 12 significant digits are accepted when they read back within two
    # units in the last place (a value read as "5.9 lb/gal" goes through pint's
    # exact factor, not this float one); otherwise as many digits as needed.
    tol = 2 * math.ulp(x)
    for digits in (12, 15, 16, 17):
        text = f"{v:.{digits}g}"
        back = float(text) * factor
        if back == x or (digits == 12 and abs(back - x) <= tol) or digits == 17:
            break
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


def tables(data: dict) -> str:
    """Whole top-level tables (kept unknown keys) through tomli-w."""
    return tomli_w.dumps(data) if data else ""
