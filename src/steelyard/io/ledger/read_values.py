"""Reading single values of a ledger: numbers with their units, nesting bounds, type words.

Shared by the item reader (read_items.py) and the rest of the strict reader
(read.py): one place that turns a TOML value into SI with a located error.
"""

from __future__ import annotations

import math
import re

from steelyard.core.errors import UnitError
from steelyard.core.units import to_si, unit_factor


def finite_as_written(v: object) -> bool:
    """A bare number the file wrote as finite (it may still overflow once converted to SI)."""
    return (type(v) is float or type(v) is int) and math.isfinite(v)


def is_number(v: object) -> bool:
    return type(v) is float or type(v) is int


def si_value(value: object, dimension: str, unit: str, source: str, subject: str, field: str,
              given: dict[str, str] | None = None) -> float:
    try:
        out = to_si(value, dimension, unit)
    except UnitError as exc:
        raise exc.located(file=source, subject=subject, field=field)
    if given is not None and isinstance(value, str):
        written = unit_of(value)
        try:
            unit_factor(written, dimension)
        except UnitError:
            pass  # "3 ft 2 in" and other forms: saved in the file's unit instead
        else:
            given[field] = written
    return out


LEADING_NUMBER = re.compile(r"^[\s\ufeff]*[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?\s*")


def unit_of(text: str) -> str:
    """The unit part of "41.5 lb" (what a save writes the value back in)."""
    return LEADING_NUMBER.sub("", text, count=1).strip()


MAX_DEPTH = 32  # unknown values nested deeper than this are refused: nothing real needs more


def too_deep(value: object, limit: int = MAX_DEPTH) -> bool:
    stack = [(value, 0)]
    while stack:
        v, depth = stack.pop()
        if depth > limit:
            return True
        if isinstance(v, dict):
            stack.extend((x, depth + 1) for x in v.values())
        elif isinstance(v, list):
            stack.extend((x, depth + 1) for x in v)
    return False


KIND_WORDS = {(str,): "text", (int, float, str): "a number or text", (dict,): "a table", (bool,): "true or false",
               (list,): "a list", (list, str): "a list of names (or one name)"}
