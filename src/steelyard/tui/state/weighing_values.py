"""The weighing form's fields <-> a `[weighing]` table, and the reduction shown live.

The form holds text exactly as typed; `table_from_fields` turns it into the
same table a ledger file carries (docs/control.md: bare numbers in the
file's units, any value may carry its unit), so `io.report_weighing`
reduces it with the very code `steelyard weigh` uses, and the table is kept
in the ledger as the record of the weighing. Pure: no widgets.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field, replace

import numpy as np
from rich.text import Text

from steelyard.core.display import AXIS_NAMES, DisplayUnits, fmt, pretty_unit
from steelyard.core.errors import SteelyardError, UnitError
from steelyard.core.document.model import FileUnits, Ledger
from steelyard.core.units import to_si
from steelyard.io.report.weighing import Weighing, weighed_ledger, weigh_table
from steelyard.tui.text import clean

POINT_FIELDS = ("name", "x", "y", "z", "reading", "tare")
ADJUST_FIELDS = ("name", "item", "amount", "density", "x", "y", "z")
SECTIONS = ("point", "on_board", "missing")
_KNOWN = {"point", "on_board", "missing", "replaces", "vertical_cg"}


def _blank(kind: str) -> dict[str, str]:
    return dict.fromkeys(POINT_FIELDS if kind == "point" else ADJUST_FIELDS, "")


@dataclass(frozen=True)
class WeighingFields:
    """Everything the form shows, as text; rows whose fields are all empty are ignored."""

    point: tuple[dict, ...] = ()
    on_board: tuple[dict, ...] = ()
    missing: tuple[dict, ...] = ()
    replaces: str | None = None
    vertical_cg: str = ""
    keep: Mapping[str, object] = field(default_factory=dict)  # date, note, by: kept as read

    def rows(self, kind: str) -> tuple[dict, ...]:
        return getattr(self, kind)

    def with_row(self, kind: str) -> "WeighingFields":
        return replace(self, **{kind: self.rows(kind) + (_blank(kind),)})

    def with_value(self, kind: str, row: int, key: str, text: str) -> "WeighingFields":
        rows = [dict(r) for r in self.rows(kind)]
        rows[row][key] = text
        return replace(self, **{kind: tuple(rows)})


def _text(v: object) -> str:
    if isinstance(v, bool):
        return str(v).lower()
    if isinstance(v, (int, float)):
        f = float(v)
        return str(int(f)) if f.is_integer() and abs(f) < 1e15 else repr(f)
    return "" if v is None else str(v)


def _at(row: dict, value: object) -> None:
    if isinstance(value, (list, tuple)) and len(value) == 3:
        row["x"], row["y"], row["z"] = (_text(v) for v in value)


def _rows(raw: object) -> list:
    if isinstance(raw, Mapping):
        return [raw]
    return list(raw) if isinstance(raw, (list, tuple)) else []


def fields_from_table(table: Mapping | None, ledger: Ledger) -> WeighingFields:
    """The form prefilled from the ledger's `[weighing]` table (or three empty scale points)."""
    if not isinstance(table, Mapping):
        return WeighingFields(point=tuple(_blank("point") for _ in range(3)), on_board=(_blank("on_board"),),
                              missing=(_blank("missing"),), replaces=guess_replaces(ledger))
    points = []
    for p in _rows(table.get("point")):
        row = _blank("point")
        if isinstance(p, Mapping):
            row.update(name=_text(p.get("name")), reading=_text(p.get("reading")), tare=_text(p.get("tare")))
            _at(row, p.get("at"))
        points.append(row)
    adjust: dict[str, list] = {}
    for kind in ("on_board", "missing"):
        out = []
        for e in _rows(table.get(kind)):
            row = _blank(kind)
            if isinstance(e, str):
                row["item"] = e
            elif isinstance(e, Mapping):
                row.update(name=_text(e.get("name")), item=_text(e.get("item")), density=_text(e.get("density")),
                           amount=_text(e.get("mass", e.get("volume"))))
                _at(row, e.get("at"))
            out.append(row)
        adjust[kind] = out or [_blank(kind)]
    replaces = table.get("replaces") if isinstance(table.get("replaces"), str) else guess_replaces(ledger)
    return WeighingFields(tuple(points) or (_blank("point"),), tuple(adjust["on_board"]), tuple(adjust["missing"]),
                          replaces, _text(table.get("vertical_cg")), {k: v for k, v in table.items() if k not in _KNOWN})


def guess_replaces(ledger: Ledger) -> str | None:
    """A fixed item that looks like the empty-vehicle record ("empty" in its id or name)."""
    for it in ledger.items:
        if not it.variable and ("empty" in it.id.lower() or "empty" in it.name.lower()):
            return it.id
    return None


def _value(text: str) -> object:
    """A typed value for the table: a bare number stays a number (file units), else the text."""
    s = text.strip()
    try:
        return float(s)
    except ValueError:
        return s


def _is_volume(text: str, units: FileUnits, subject: str) -> bool:
    """Whether a typed amount is a volume ("30 gal") rather than a mass; bare numbers are masses."""
    value = _value(text)
    if not isinstance(value, str):
        return False
    try:
        to_si(value, "mass", units.mass)
        return False
    except UnitError:
        pass
    try:
        to_si(value, "volume", units.volume or "m**3")
        return True
    except SteelyardError:
        raise SteelyardError(f"cannot read {text.strip()!r} as a mass or a volume", subject=subject,
                             field="amount") from None


def _xyz(row: dict, subject: str):
    xyz = [row.get(a, "").strip() for a in AXIS_NAMES]
    if not any(xyz):
        return None
    if not all(xyz):
        missing = next(a for a, v in zip(AXIS_NAMES, xyz) if not v)
        raise SteelyardError("give x, y and z (or none, to use the item's CG)", subject=subject, field=missing)
    return [_value(v) for v in xyz]


def table_from_fields(f: WeighingFields, units: FileUnits) -> dict:
    """The `[weighing]` table the fields describe (empty rows left out)."""
    table: dict = dict(f.keep)
    if f.replaces:
        table["replaces"] = f.replaces
    if f.vertical_cg.strip():
        table["vertical_cg"] = _value(f.vertical_cg)
    points = []
    for k, row in enumerate(f.point, 1):
        if not any(v.strip() for v in row.values()):
            continue
        subject = f"weighing point #{k}"
        entry: dict = {"name": row["name"].strip() or f"#{k}"}
        at = _xyz(row, subject)
        if at is None:
            raise SteelyardError("needs its position x, y, z", subject=subject, field="x")
        entry["at"] = at
        for key in ("reading", "tare"):
            if row[key].strip():
                entry[key] = _value(row[key])
        points.append(entry)
    table["point"] = points
    for kind in ("on_board", "missing"):
        out = []
        for k, row in enumerate(f.rows(kind), 1):
            if not any(v.strip() for v in row.values()):
                continue
            subject = f"weighing {kind} #{k}"
            entry = {}
            for key in ("name", "item"):
                if row[key].strip():
                    entry[key] = row[key].strip()
            if row["amount"].strip():
                entry["volume" if _is_volume(row["amount"], units, subject) else "mass"] = _value(row["amount"])
            if row["density"].strip():
                entry["density"] = _value(row["density"])
            at = _xyz(row, subject)
            if at is not None:
                entry["at"] = at
            out.append(entry)
        if out:
            table[kind] = out
    return table


def reduce_fields(ledger: Ledger, f: WeighingFields) -> tuple[dict, Weighing]:
    """(table, reduction) of the fields; SteelyardError names the point or entry and the field."""
    table = table_from_fields(f, ledger.units)
    return table, weigh_table(ledger, table)


def weighed(ledger: Ledger, table: dict, w: Weighing) -> Ledger:
    """The ledger with the empty-vehicle item replaced and the weighing kept as its `[weighing]` table."""
    new = weighed_ledger(ledger, w)
    out = new.evolve(weighing=table)
    for key in ("arrays", "index"):
        if key in new.__dict__:
            out.__dict__[key] = new.__dict__[key]
    return out


def result_text(ledger: Ledger, w: Weighing, du: DisplayUnits) -> Text:
    """Net readings, weighed and empty mass and CG, and the replaced item's old → new values."""
    mu, lu = pretty_unit(du.mass), pretty_unit(du.length)
    r = w.result
    t = Text()
    t.append("Net (reading − tare): ", style="bold")
    t.append(", ".join(f"{clean(n)} {du.num(x, 'mass')}" for n, x in zip(w.inputs.names, r.net)) + f" {mu}\n")

    def cg(v) -> str:
        return "  ".join(f"{AXIS_NAMES[k]} {du.num(v[k], 'length')}" for k in range(3)) + f" {lu}"

    off = sum(a.mass for a in w.inputs.on_board)
    add = sum(a.mass for a in w.inputs.missing)
    t.append("Weighed ", style="bold")
    t.append(f"{du.num(r.weighed_mass, 'mass')} {mu}, CG {cg(r.weighed_cg)}\n")
    t.append(f"  − on board {du.num(off, 'mass')} {mu} + missing {du.num(add, 'mass')} {mu} =\n")
    t.append("Empty   ", style="bold")
    t.append(f"{du.num(r.empty_mass, 'mass')} {mu}, CG {cg(r.empty_cg)}\n")
    if np.isnan(r.empty_cg).any():
        t.append("  (vertical CG: not found by a level weighing; the item keeps its old value)\n", style="dim")
    if w.old is not None and w.new is not None:
        t.append(f"Replaces {clean(w.old.id)}: ", style="bold")
        t.append(f"mass {du.num(w.old.mass * w.old.quantity, 'mass')} → {du.num(w.new.mass, 'mass')} {mu}; "
                 + ", ".join(f"{AXIS_NAMES[k]} {du.num(w.old.cg[k], 'length')} → {du.num(w.new.cg[k], 'length')}"
                             for k in range(3)) + f" {lu}")
    else:
        t.append("Choose the item the weighing replaces to apply it.", style="bold")
    return t
