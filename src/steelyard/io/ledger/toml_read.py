"""Reading TOML text, fast when we can and exactly like tomllib always.

A compiled parser (rtoml, a required dependency) is tried first: at 100,000
items tomllib spends seconds where rtoml spends a fraction. Whenever rtoml refuses a text, the
text is handed to tomllib, whose verdict (and error message) is final, so a
file means the same thing with or without the fast parser.
"""

from __future__ import annotations

import tomllib

from steelyard.core.errors import FormatError
from steelyard.io.ledger.conflicts import conflict_marker_line, conflict_message

import os

try:  # a required dependency (docs/performance.md, "Big ledgers"); tomllib still reads everything
    import rtoml as _rtoml
except ImportError:  # pragma: no cover - exercised where rtoml is absent
    _rtoml = None
if os.environ.get("STEELYARD_TOML") == "tomllib":  # benchmarks and bug hunts: the standard library only
    _rtoml = None

PARSER = "rtoml" if _rtoml is not None else "tomllib"


def decode(data: bytes, *, source: str) -> str:
    """Bytes of a file to text, refusing binary data with a clear message."""
    if b"\x00" in data:
        raise FormatError("not a text file (it contains NUL bytes)", file=source)
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise FormatError(f"not UTF-8 text (bad byte at offset {exc.start})", file=source) from None
    return text


def parse_toml(text: str, *, source: str, fast: bool = True) -> dict:
    """Parse TOML text; a syntax error becomes one FormatError line naming the file."""
    marker = conflict_marker_line(text)
    if marker is not None:
        raise FormatError(conflict_message(text, marker), file=source)
    if fast and _rtoml is not None:
        try:
            return _rtoml.loads(text)
        except Exception:
            pass  # tomllib decides, and words the error
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise FormatError(f"not valid TOML: {exc}", file=source) from None
    except RecursionError:
        raise FormatError("not valid TOML: nested too deeply", file=source) from None
    except ValueError as exc:  # e.g. an integer longer than Python's digit limit
        raise FormatError(f"not readable: {str(exc)[:120]}", file=source) from None
