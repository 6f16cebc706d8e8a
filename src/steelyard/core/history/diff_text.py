"""What a diff says in words: old → new for one field, in display units, never as program notation.

A report is read by people checking a ledger, so a changed limit reads
`max_mass: 1650 lb → 1550 lb` and a list `["payload/fuel"] → ["payload/fuel",
"aux"]` — not a language's repr of the stored value. Values the file gives
as written (user data, tolerances, scopes) are shown TOML-like; SI values
are shown in the display units; two values that differ only past the usual
digits are shown with every digit, so a difference never reads as "x → x".
Pure: it returns text, the CLI and the TUI print it.
"""

from __future__ import annotations

import datetime as _dt
from collections.abc import Mapping
from typing import TYPE_CHECKING

from steelyard.core.display import DisplayUnits, fmt, pretty_unit
from steelyard.core.history.diff_equal import same
from steelyard.core.history.diff_tables import KIND_SUFFIX, NAMED, SINGLE
from steelyard.core.physics.inertia import COMPONENTS
from steelyard.core.units import unit_factor

if TYPE_CHECKING:  # pragma: no cover
    from steelyard.core.history.diff import LedgerDiff

#: significant digits of a definition's number; all 17 when two values would otherwise read the same
DIGITS, ALL_DIGITS = 10, 17


def number(x: float | int, digits: int = DIGITS) -> str:
    """A number compact and exact enough to read: 7, 6.5, 1760, 0.005 (no thousands separators)."""
    if isinstance(x, bool):
        return "true" if x else "false"
    if isinstance(x, int):
        return str(x)
    x = float(x)
    if x != x:
        return "—"
    out = format(x, f".{digits}g")
    return "0" if out == "-0" else out


def _quoted(s: str) -> str:
    return '"' + s.replace("\\", "\\\\").replace('"', '\\"') + '"'


def value_text(v: object, digits: int = DIGITS, inner: bool = False) -> str:
    """A value as written, TOML-like: strings plain at the top and quoted inside lists and tables."""
    if v is None:
        return "—"
    if isinstance(v, str):
        return _quoted(v) if inner else v
    if type(v).__module__ == "numpy" and hasattr(v, "tolist"):
        return value_text(v.tolist(), digits, inner)  # a numpy scalar or array: the plain numbers it holds
    if isinstance(v, (bool, int, float)):
        return number(v, digits)
    if isinstance(v, Mapping):
        if not v:
            return "{}"
        return "{ " + ", ".join(f"{k} = {value_text(x, digits, True)}" for k, x in v.items()) + " }"
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(value_text(x, digits, True) for x in v) + "]"
    if isinstance(v, (_dt.date, _dt.time)):
        return v.isoformat()
    return str(v)


# --------------------------------------------------------------------------- values of a kind


def _volume_unit(du: DisplayUnits) -> tuple[float, str]:
    """US gallons beside pounds, litres otherwise (common practice for fuel)."""
    return (unit_factor("gal", "volume"), "gal") if du.mass == "lb" else (1e-3, "L")


def _scale(kind: str, du: DisplayUnits) -> tuple[float, str]:
    """(SI per display unit, display unit label) of a quantity kind."""
    if kind == "mass":
        return unit_factor(du.mass, "mass"), pretty_unit(du.mass)
    if kind == "length":
        return unit_factor(du.length, "length"), pretty_unit(du.length)
    if kind == "inertia":
        return unit_factor(du.inertia, "inertia"), pretty_unit(du.inertia)
    if kind == "volume":
        return _volume_unit(du)
    # density: pounds per US gallon beside pounds, else kg/m³
    return (unit_factor("lb/gal", "density"), "lb/gal") if du.mass == "lb" else (1.0, "kg/m³")


def _quantity(v: object, kind: str, du: DisplayUnits, digits: int) -> str:
    if v is None:
        return "—"
    f, unit = _scale(kind, du)
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(number(x / f, digits) for x in v) + f"] {unit}"
    if isinstance(v, (int, float)) and not isinstance(v, bool):
        return f"{number(v / f, digits)} {unit}"
    return value_text(v, digits)


def _amount(v: object, du: DisplayUnits, digits: int) -> str:
    if isinstance(v, Mapping) and len(v) == 1:
        (key, x), = v.items()
        if key == "fraction":
            return f"fraction {number(x, digits)}"
        if key == "mass_kg":
            return _quantity(x, "mass", du, digits)
        if key == "volume_m3":
            return _quantity(x, "volume", du, digits)
    return value_text(v, digits)


def _points(v: object, kind: str, du: DisplayUnits, digits: int) -> str:
    if not isinstance(v, (list, tuple)):
        return value_text(v, digits)
    f, lu = _scale("length", du)
    m, mu = _scale("mass", du)
    first = (lambda c: f"{number(c, digits)} %MAC") if kind == "points_mac" else (
        lambda c: f"{number(c / f, digits)} {lu}")
    return ", ".join(f"({first(c)}, {number(w / m, digits)} {mu})" for c, w in v)


def _step(v: object, du: DisplayUnits, digits: int) -> str:
    if not isinstance(v, Mapping):
        return value_text(v, digits)
    items = v.get("items") or {}
    what = ", ".join(k if a is None else f"{k} {_amount(a, du, digits)}" for k, a in items.items())
    out = f"{v.get('name')}: {v.get('kind')} {what}"
    if v.get("amount") is not None:
        out += f" ({_amount(v['amount'], du, digits)} in all)"
    return out + f", {v.get('samples')} samples"


def kind_text(v: object, kind: str, du: DisplayUnits, digits: int = DIGITS) -> str:
    """One value of a definition field in words, by its kind (core.history.diff_tables)."""
    if v is None:
        return "—"
    if kind in ("mass", "length", "inertia", "volume", "density"):
        return _quantity(v, kind, du, digits)
    if kind == "fraction" and isinstance(v, (int, float)):
        return f"{number(100.0 * v, digits)} %"
    if kind == "amount":
        return _amount(v, du, digits)
    if kind in ("points", "points_mac"):
        return _points(v, kind, du, digits)
    if kind == "step":
        return _step(v, du, digits)
    return value_text(v, digits)


def _pair(old: object, new: object, show) -> tuple[str, str]:
    a, b = show(old, DIGITS), show(new, DIGITS)
    if a == b and not same(old, new):
        a, b = show(old, ALL_DIGITS), show(new, ALL_DIGITS)
    return a, b


def label_of(key: str, kind: str) -> str:
    """The field as the file names it: `max_mass_kg` -> `max_mass`."""
    suffix = KIND_SUFFIX.get(kind, "")
    return key[: -len(suffix)] if suffix and key.endswith(suffix) else key


def field_rows(key: str, kind: str, old: object, new: object, du: DisplayUnits) -> list[tuple[str, str, str]]:
    """(label, old text, new text) of one changed definition field; a component table gives a row per component."""
    label = label_of(key, kind)
    if kind in ("mass", "length", "inertia", "volume", "density") and (
            isinstance(old, Mapping) or isinstance(new, Mapping)):
        o, n = old or {}, new or {}
        keys = [c for c in COMPONENTS if c in o or c in n] + [c for c in list(o) + list(n) if c not in COMPONENTS]
        rows = []
        for c in dict.fromkeys(keys):
            if not same(o.get(c), n.get(c)):
                rows.append((f"{label}.{c}", *_pair(o.get(c), n.get(c), lambda v, d: kind_text(v, kind, du, d))))
        return rows
    return [(label, *_pair(old, new, lambda v, d: kind_text(v, kind, du, d)))]


# --------------------------------------------------------------------------- item fields


def _six_text(t: dict | None, du: DisplayUnits) -> str:
    if t is None:
        return "—"
    return ", ".join(f"{k} {du.num(v, 'inertia')}" for k, v in t.items()) + f" {pretty_unit(du.inertia)}"


def _shape_text(s: dict | None, du: DisplayUnits) -> str:
    if s is None:
        return "—"
    lu = pretty_unit(du.length)
    parts = [s["kind"], f"axis {s['axis']}"]
    for k, v in s.items():
        if k not in ("kind", "axis"):
            size = "×".join(du.num(x, 'length') for x in v) if isinstance(v, list) else du.num(v, 'length')
            parts.append(f"{k} {size} {lu}")
    return ", ".join(parts)


def _q(x: float | None, du: DisplayUnits, dimension: str) -> str:
    """One value with its unit, by the one number rule (docs/numbers.md)."""
    return "—" if x is None else du.text(x, dimension)


def change_rows(name: str, old: object, new: object, du: DisplayUnits,
                kind: str | None = None) -> list[tuple[str, str, str]]:
    """One changed field as display rows (label, old text, new text), in display units.

    An item field by its name (`mass_kg`, `cg_m`, ...), or with `kind` a
    definition's field (core.history.diff_tables). A vector or table field
    gives one row per component that differs, so a screen or a report shows
    "cg x  99.0000 in → 98.5000 in" rather than two lists.
    """
    if kind is not None:
        return field_rows(name, kind, old, new, du)
    mu, lu, iu = du.mass, du.length, du.inertia
    if name in ("mass_kg", "capacity_kg"):
        return [(name[:-3], _q(old, du, "mass"), _q(new, du, "mass"))]
    if name == "cg_m":
        return [(f"cg {ax}", _q(o, du, "length"), _q(n, du, "length")) for ax, o, n in zip("xyz", old, new)
                if not same(o, n)]
    if name == "inertia_kg_m2":
        if old is None or new is None:
            return [("inertia", _six_text(old, du), _six_text(new, du))]
        return [(f"inertia {k}", _q(old[k], du, "inertia"), _q(new[k], du, "inertia")) for k in COMPONENTS
                if not same(old[k], new[k])]
    if name == "density_kg_m3":
        f, unit = _scale("density", du)
        return [("density", *("—" if v is None else f"{fmt(v / f)} {unit}" for v in (old, new)))]
    if name == "shape":
        return [("shape", _shape_text(old, du), _shape_text(new, du))]
    if name == "rotate":
        return [("rotate", *(" then ".join(f"{a} {d:g}°" for a, d in r) or "none" for r in (old, new)))]
    if name == "variable":
        return [("variable", *("load item" if v else "fixed" for v in (old, new)))]
    return [(name, *_pair(old, new, value_text))]


# --------------------------------------------------------------------------- definition sections


def _name(n: str) -> str:
    return n if n else '""'


def _named_lines(d, du: DisplayUnits) -> list[str]:
    lines = [f"  added {_name(n)}" for n in d.added] + [f"  removed {_name(n)}" for n in d.removed]
    for name, fields in d.changed:
        for key, (old, new) in fields.items():
            for label, a, b in field_rows(key, d.kinds.get(key, "plain"), old, new, du):
                lines.append(f"  {_name(name)}: {label}: {a} → {b}")
    return lines


def _single_lines(t, du: DisplayUnits) -> list[str]:
    lines = [] if t.status == "changed" else [f"  {t.status}"]
    for key, (old, new) in t.fields.items():
        for label, a, b in field_rows(key, t.kinds.get(key, "plain"), old, new, du):
            lines.append(f"  {label}: {a} → {b}")
    return lines


TITLES = {"limits": "Limit definitions", "allocations": "Allocation definitions",
          "sequences": "Sequence definitions", "mac": "[mac] table", "fuel": "[fuel] table",
          "growth": "[growth] allowances in effect", "weighing": "[weighing] table", "user": "[user] table"}


def definition_sections(diff: "LedgerDiff", du: DisplayUnits) -> list[tuple[str, list[str]]]:
    """(title, lines) for every kind of definition that differs, envelopes and loadouts first."""
    out = []
    for title, d in (("Envelope definitions", diff.envelope_definitions),
                     ("Loadout definitions", diff.loadout_definitions)):
        if d:
            out.append((title, _named_lines(d, du)))
    tables = diff.tables
    for key in NAMED + SINGLE:
        d = getattr(tables, key)
        if d:
            out.append((TITLES[key], _named_lines(d, du) if key in NAMED else _single_lines(d, du)))
    return out
