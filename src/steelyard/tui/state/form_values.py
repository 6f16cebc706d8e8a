"""Item form text <-> `Item`: parsing with units, validating, no widgets.

A field takes a bare number in the file's unit ("41.5") or a value with its
unit ("41.5 lb", "3 ft 2 in"). A field the user did not touch keeps the
item's value exactly, so editing one number never nudges the others. Every
problem raises `SteelyardError` whose `field` is the form field's key, so the
form can show the message beside it.
"""

from __future__ import annotations

import math
import re

import numpy as np

from steelyard.core.errors import SteelyardError, UnitError, said
from steelyard.core.physics.inertia import COMPONENTS, realisability_problem, tensor_from_six
from steelyard.core.loading.loadout import amount_fraction
from steelyard.core.document.model import FileUnits, Item, Ledger, Shape
from steelyard.core.physics.shapes import SHAPE_PARAMS, validate_shape
from steelyard.core.units import NUMBER, number_problem, parse_number, parse_quantity, to_si, unit_factor
from steelyard.io.ledger.toml_write import number

NO_SHAPE = "point mass"
GIVEN_INERTIA = "inertia typed in"
AXES = ("x", "y", "z")
_SINGLE = re.compile(rf"^\s*{NUMBER}\s*([A-Za-z_][A-Za-z_0-9*/^ ()]*)\s*$")  # ASCII digits only
#: a quantity: ASCII digits only ("١٢".isdigit() is true too), at most a billion units
_WHOLE = re.compile(r"[0-9]{1,9}")


def density_unit(u: FileUnits) -> str:
    return u.density_unit


def kinds() -> list[str]:
    return [NO_SHAPE, GIVEN_INERTIA] + [k for k in SHAPE_PARAMS if k != "point"]


def _text(x: float, dim: str, file_unit: str, given: str | None) -> str:
    if given:
        return f"{number(x, unit_factor(given, dim))} {given}"
    return number(x, unit_factor(file_unit, dim))


def initial_fields(item: Item | None, u: FileUnits) -> dict[str, str]:
    """The form's starting text for an item (None: a new, empty item)."""
    if item is None:
        return {"id": "", "name": "", "group": "", "mass": "", "quantity": "1", "x": "", "y": "", "z": "",
                "variable": "", "density": "", "kind": NO_SHAPE, "axis": "z", "rotate": ""}
    g = item.given_units
    out = {"id": item.id, "name": item.name, "group": item.group,
           "mass": _text(item.mass, "mass", u.mass, g.get("mass")), "quantity": str(item.quantity),
           "variable": "yes" if item.variable else "",
           "density": "" if item.density is None else _text(item.density, "density", density_unit(u),
                                                           g.get("density")),
           "kind": NO_SHAPE, "axis": "z",
           "rotate": ", ".join(f"{a} {number(d)}" for a, d in item.rotate)}
    for k, a in enumerate(AXES):
        out[a] = _text(item.cg[k], "length", u.length, g.get(f"cg.{k}"))
    if item.inertia is not None:
        out["kind"] = GIVEN_INERTIA
        for c, v in zip(COMPONENTS, item.inertia):
            out[f"i.{c}"] = _text(v, "inertia", u.inertia, g.get(f"inertia.{c}"))
    elif item.shape is not None and item.shape.kind != "point":
        out["kind"] = item.shape.kind
        out["axis"] = item.shape.axis
        for p, v in item.shape.params.items():
            if isinstance(v, tuple):
                out[f"dim.{p}"] = ", ".join(number(x, unit_factor(u.length, "length")) for x in v)
            else:
                out[f"dim.{p}"] = number(v, unit_factor(u.length, "length"))
    return out


def shape_fields(kind: str) -> list[tuple[str, str]]:
    """(field key, label) of the dimension or inertia inputs a kind needs."""
    if kind == GIVEN_INERTIA:
        return [(f"i.{c}", f"I{c}" if c in ("xx", "yy", "zz") else f"∫{c} dm") for c in COMPONENTS]
    spec = SHAPE_PARAMS.get(kind, {})
    return [(f"dim.{p}", p.replace("_", " ")) for p in spec]


def shape_keys() -> list[str]:
    """Every shape and inertia field key, ordered so each kind's own fields keep their order.

    The form builds one input per key up front and shows a kind's subset; a
    key shared by kinds (radius, length) is one input, keeping its text.
    """
    order: list[str] = []
    for kind in kinds():
        at = -1
        for key, _ in shape_fields(kind):
            if key in order:
                at = order.index(key)
            else:
                at += 1
                order.insert(at, key)
    return order


def quantity(text: str, dim: str, file_unit: str, field: str) -> tuple[float, str | None]:
    """SI value of one field, and the unit the user wrote (kept on save), if a single one."""
    s = text.strip()
    if not s:
        raise SteelyardError(f"required: a {dim}", field=field)
    # Strictly, as the file reader does (core.units): float() would take "1_5" as 15 and
    # other scripts' digits ("١٢") as 12. Text without a letter is meant as a bare number.
    try:
        if number_problem(s) is None or not any(ch.isalpha() for ch in s):
            return to_si(parse_number(s), dim, file_unit), None
        value = parse_quantity(s, dim)
    except UnitError as exc:
        raise SteelyardError(exc.message, field=field) from None
    m = _SINGLE.match(s)
    given = m.group(1).strip() if m else None
    if given:
        try:
            unit_factor(given, dim)
        except UnitError:
            given = None
    return value, given


def _rotate(text: str) -> tuple[tuple[str, float], ...]:
    out = []
    for part in filter(None, (p.strip() for p in re.split(r"[,;]", text))):
        bits = part.split()
        try:
            axis, deg = bits[0], parse_number(bits[1])
            ok = len(bits) == 2 and axis in AXES and math.isfinite(deg)
        except (IndexError, UnitError):
            ok = False
        if not ok:
            raise SteelyardError(f"each turn is 'axis degrees', e.g. 'z 10, x -5'; got {said(part)}",
                                 field="rotate")
        out.append((axis, deg))
    return tuple(out)


class _Reader:
    def __init__(self, fields: dict[str, str], start: dict[str, str], original: Item | None, u: FileUnits):
        self.f, self.start, self.orig, self.u = fields, start, original, u
        self.given: dict[str, str] = dict(original.given_units) if original else {}

    def same(self, key: str) -> bool:
        return self.orig is not None and self.f.get(key, "").strip() == self.start.get(key, "").strip()

    def q(self, key: str, dim: str, unit: str, given_key: str, keep: float | None) -> float:
        if keep is not None and self.same(key):
            return keep
        value, given = quantity(self.f.get(key, ""), dim, unit, key)
        if given:
            self.given[given_key] = given
        else:
            self.given.pop(given_key, None)
        return value


def item_from_fields(fields: dict[str, str], original: Item | None, ledger: Ledger) -> Item:
    """Build and check the item the form describes (raises SteelyardError with the field key)."""
    u = ledger.units
    r = _Reader(fields, initial_fields(original, u), original, u)
    o = original
    ident = fields.get("id", "").strip()
    if not ident:
        raise SteelyardError("required: a short unique id", field="id")
    if ident in ledger.index and (o is None or ident != o.id):
        raise SteelyardError(f"id {said(ident)} is already used by another item", field="id")
    mass = r.q("mass", "mass", u.mass, "mass", o.mass if o else None)
    if mass < 0:
        raise SteelyardError("must not be negative", field="mass")
    qtext = fields.get("quantity", "1").strip() or "1"
    if not _WHOLE.fullmatch(qtext) or int(qtext) < 1:
        raise SteelyardError(f"must be a whole number of 1 or more in ASCII digits, got {said(qtext)}",
                             field="quantity")
    cg = tuple(r.q(a, "length", u.length, f"cg.{k}", o.cg[k] if o else None) for k, a in enumerate(AXES))
    variable = fields.get("variable", "").strip().lower() in ("yes", "true", "1", "on")
    density = None
    if fields.get("density", "").strip():
        density = r.q("density", "density", density_unit(u), "density", o.density if o else None)
        if not density > 0:
            raise SteelyardError("must be greater than zero", field="density")
    else:
        r.given.pop("density", None)
    kind = fields.get("kind", NO_SHAPE)
    inertia = shape = None
    for c in COMPONENTS:
        if kind != GIVEN_INERTIA:
            r.given.pop(f"inertia.{c}", None)
    if kind == GIVEN_INERTIA:
        keep = o.inertia if o is not None and o.inertia is not None else None
        six = [r.q(f"i.{c}", "inertia", u.inertia, f"inertia.{c}", None if keep is None else keep[k])
               if fields.get(f"i.{c}", "").strip() or c in ("xx", "yy", "zz") else 0.0
               for k, c in enumerate(COMPONENTS)]
        problem = realisability_problem(tensor_from_six(np.array(six)))
        if problem:
            raise SteelyardError(problem, field="i.zz")
        inertia = tuple(six)
    elif kind != NO_SHAPE:
        shape = _shape(kind, fields, u, o)
    turns = _rotate(fields.get("rotate", ""))
    name = fields.get("name", "").strip()
    group = "/".join(p.strip() for p in fields.get("group", "").split("/") if p.strip())
    base = o if o is not None else Item(ident, 0.0, (0.0, 0.0, 0.0))
    return base.evolve(id=ident, name=name, group=group, mass=mass, cg=cg, quantity=int(qtext),
                       inertia=inertia, shape=shape, rotate=turns, variable=variable, density=density,
                       given_units=r.given)


def _shape(kind: str, fields: dict[str, str], u: FileUnits, o: Item | None) -> Shape:
    if kind not in SHAPE_PARAMS:
        raise SteelyardError(f"unknown shape {said(kind)}", field="kind")
    axis = fields.get("axis", "z").strip() or "z"
    if axis not in AXES:
        raise SteelyardError("must be x, y or z", field="axis")
    old = o.shape.params if o is not None and o.shape is not None and o.shape.kind == kind else {}
    start = initial_fields(o, u) if old else {}
    params: dict = {}
    for p, dim in SHAPE_PARAMS[kind].items():
        key = f"dim.{p}"
        text = fields.get(key, "")
        if p in old and text.strip() == start.get(key, "").strip():
            params[p] = old[p]
            continue
        if dim == "length":
            params[p] = quantity(text, "length", u.length, key)[0]
        else:
            parts = [t for t in re.split(r"[,;]", text) if t.strip()]
            count = 3 if dim == "length3" else 2
            if len(parts) != count:
                raise SteelyardError(f"give {count} lengths separated by commas", field=key)
            params[p] = tuple(quantity(t, "length", u.length, key)[0] for t in parts)
    try:
        validate_shape(kind, params)
    except SteelyardError as exc:
        field = exc.field.replace("shape.", "dim.") if exc.field else "kind"
        raise SteelyardError(exc.message, field=field) from None
    return Shape(kind, params, axis, axis_written=bool(old) and o.shape.axis_written)  # as the file had it


def check_loadouts(ledger: Ledger, item: Item) -> None:
    """Every loadout that sets an amount of `item` must still be able to carry it."""
    for lo in ledger.loadouts:
        if item.id not in lo.set:
            continue
        if not item.variable:
            raise SteelyardError(f"loadout {lo.name!r} sets an amount of it, so it must stay variable",
                                 field="variable")
        try:
            amount_fraction(ledger, item.id, lo.set[item.id], f"loadout {lo.name!r}")
        except SteelyardError as exc:
            raise SteelyardError(f"loadout {lo.name!r}: {exc.message}", field="mass") from None
