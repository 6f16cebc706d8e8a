"""File text -> `Ledger`: the strict reader.

Every table and key is checked against the format's schema first
(core.document.schema: an unknown one is an error with a "did you mean"
hint; `user` tables are the user's own and never looked into), then the v1
contract's fields are read here and every later table is validated once by
the module that owns its meaning (core.validation), so a bad file is refused
when it is opened, not when some command happens to need the table.

Each problem raises one `SteelyardError` naming the file, the item (or
loadout, envelope, table) and the field. Bare numbers are converted to SI in
bulk with one factor per column; only values written as strings with a unit
go through the (cached) pint parser.
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable, Iterator

import numpy as np

from steelyard.core.document.schema import check_document, unknown_key
from steelyard.core.physics.groups import group_depth_problem
from steelyard.core.errors import FormatError, SteelyardError, UnitError, item_subject, said
from steelyard.core.validation import validate_document
from steelyard.core.physics.inertia import COMPONENTS, realisability_problem, realisability_problems, tensor_from_six
from steelyard.core.document.model import (DIRECTIONS, Amount, Envelope, FileUnits, Frame, Item, ItemArrays, Ledger,
                          Loadout, Shape, with_arrays)
from steelyard.core.physics.rotation import rotation_matrix
from steelyard.core.units import parse_quantity, to_si, unit_factor

FORMAT_VERSION = 1
#: the v1 contract's item keys; an item with only these skips the per-key reading of the rest
ITEM_KEYS = {"id", "name", "group", "mass", "cg", "quantity", "inertia", "shape", "rotate",
             "variable", "density"}
#: item keys beyond v1 -> the TOML types each may hold (deeper checks: core.validation)
_ITEM_MORE = {"maturity": (str,), "growth": (int, float, str), "tolerance": (dict,), "removable": (bool,),
              "cg_table": (list,), "loaded": (dict,), "user": (dict,)}
_AXIS_VECTOR = {"fwd": (1, 0, 0), "aft": (-1, 0, 0), "right": (0, 1, 0), "left": (0, -1, 0),
                "down": (0, 0, 1), "up": (0, 0, -1)}

Progress = Callable[[str, float], None]


def _finite_as_written(v: object) -> bool:
    """A bare number the file wrote as finite (it may still overflow once converted to SI)."""
    return (type(v) is float or type(v) is int) and math.isfinite(v)


def _is_number(v: object) -> bool:
    return type(v) is float or type(v) is int


def read_units(raw: object, source: str) -> FileUnits:
    if raw is None:
        return FileUnits()
    if not isinstance(raw, dict):
        raise SteelyardError("must be a table", file=source, subject="units")
    kinds = {"mass": "mass", "length": "length", "inertia": "inertia", "volume": "volume",
             "density": "density"}
    values: dict[str, str] = {}
    for key, value in raw.items():
        if key not in kinds:
            raise unknown_key(key, kinds, subject="units")
        if not isinstance(value, str):
            raise SteelyardError(f"must be a unit string, got {value!r}", file=source, subject="units", field=key)
        try:
            unit_factor(value, kinds[key])
        except UnitError as exc:
            raise exc.located(file=source, subject="units", field=key)
        values[key] = value
    return FileUnits(**values)


def read_frame(raw: object, source: str) -> Frame:
    if raw is None:
        return Frame()
    if not isinstance(raw, dict):
        raise SteelyardError("must be a table", file=source, subject="frame")
    dirs = {}
    for key in ("x", "y", "z"):
        value = raw.get(key, getattr(Frame(), key))
        if value not in DIRECTIONS:
            raise SteelyardError(f"must be one of {', '.join(DIRECTIONS)}, got {value!r}",
                                 file=source, subject="frame", field=key)
        dirs[key] = value
    unknown = set(raw) - {"x", "y", "z"}
    if unknown:
        raise SteelyardError(f"unknown key {sorted(unknown)[0]!r}", file=source, subject="frame")
    m = np.array([_AXIS_VECTOR[dirs[k]] for k in ("x", "y", "z")], dtype=float)
    det = round(float(np.linalg.det(m)))
    if det == 0:
        raise SteelyardError("two axes point along the same line", file=source, subject="frame")
    if det < 0:
        raise SteelyardError("axes are left-handed; the body frame must be right-handed",
                             file=source, subject="frame")
    return Frame(**dirs)


def _quantity(value: object, dimension: str, unit: str, source: str, subject: str, field: str,
              given: dict[str, str] | None = None) -> float:
    try:
        out = to_si(value, dimension, unit)
    except UnitError as exc:
        raise exc.located(file=source, subject=subject, field=field)
    if given is not None and isinstance(value, str):
        written = _unit_of(value)
        try:
            unit_factor(written, dimension)
        except UnitError:
            pass  # "3 ft 2 in" and other forms: saved in the file's unit instead
        else:
            given[field] = written
    return out


_LEADING_NUMBER = re.compile(r"^[\s\ufeff]*[-+]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][-+]?\d+)?\s*")


def _unit_of(text: str) -> str:
    """The unit part of "41.5 lb" (what a save writes the value back in)."""
    return _LEADING_NUMBER.sub("", text, count=1).strip()


_MAX_DEPTH = 32  # unknown values nested deeper than this are refused: nothing real needs more


def _too_deep(value: object, limit: int = _MAX_DEPTH) -> bool:
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


def _tame_big_ints(value: object) -> object:
    """Copy of parsed TOML with integers beyond the float range turned into ±inf,
    so the normal checks can name the item and field instead of crashing."""
    if isinstance(value, dict):
        return {k: _tame_big_ints(v) for k, v in value.items()}
    if isinstance(value, list):
        return [_tame_big_ints(v) for v in value]
    if type(value) is int:
        try:
            float(value)
        except OverflowError:
            return math.inf if value > 0 else -math.inf
    return value


class _Items:
    """Bulk reader of the [[item]] array."""

    def __init__(self, raw_items: list, units: FileUnits, source: str, progress: Progress | None):
        self.raw = raw_items
        self.units = units
        self.source = source
        self.progress = progress

    def fail(self, i: int, field: str | None, message: str) -> SteelyardError:
        raw = self.raw[i]
        ident = raw.get("id") if isinstance(raw, dict) else None
        subject = item_subject(ident if isinstance(ident, str) and ident else i + 1)
        return SteelyardError(message, file=self.source, subject=subject, field=field)

    def read(self) -> tuple[list[Item], ItemArrays]:
        raw = self.raw
        n = len(raw)
        src = self.source
        u = self.units
        mass_f = unit_factor(u.mass, "mass")
        len_f = unit_factor(u.length, "length")
        mass = np.empty(n)
        mass_si = np.zeros(n, dtype=bool)
        cg = np.empty((n, 3))
        cg_si = np.zeros(n, dtype=bool)
        quantity = np.ones(n)
        variable = np.zeros(n, dtype=bool)
        ids: list[str] = [""] * n
        seen: dict[str, int] = {}
        given: list[dict[str, str] | None] = [None] * n
        step = max(1, n // 20)
        for i, it in enumerate(raw):
            if self.progress is not None and i % step == 0:
                self.progress("checking items", i / max(n, 1))
            if type(it) is not dict:
                raise SteelyardError("must be a table", file=src, subject=item_subject(i + 1))
            ident = it.get("id")
            if type(ident) is not str or not ident.strip():
                raise self.fail(i, "id", "required: a non-empty string")
            if ident in seen:
                raise self.fail(i, "id", f"duplicate id (first used by item #{seen[ident] + 1})")
            seen[ident] = i
            ids[i] = ident
            m = it.get("mass")
            if type(m) is float or type(m) is int:
                mass[i] = m
            elif m is None:
                raise self.fail(i, "mass", "required")
            else:
                g: dict[str, str] = {}
                subject = item_subject(ident)
                mass[i] = _quantity(m, "mass", u.mass, src, subject, "mass", g)
                mass_si[i] = True
                given[i] = g
            c = it.get("cg")
            if type(c) is not list or len(c) != 3:
                if c is None:
                    raise self.fail(i, "cg", "required: [x, y, z]")
                raise self.fail(i, "cg", f"must be a list of 3 numbers [x, y, z], got {c!r}"[:200])
            c0, c1, c2 = c
            if _is_number(c0) and _is_number(c1) and _is_number(c2):
                cg[i] = c
            else:
                subject = item_subject(ident)
                for k, v in enumerate(c):
                    if type(v) is bool or not (_is_number(v) or isinstance(v, str)):
                        raise self.fail(i, "cg", f"element {k + 1} must be a length, got {v!r}")
                g = given[i] if given[i] is not None else {}
                cg[i] = [v * len_f if _is_number(v) else
                         _quantity(v, "length", u.length, src, subject, f"cg.{k}", g)
                         for k, v in enumerate(c)]
                given[i] = g
                cg_si[i] = True
            q = it.get("quantity", 1)
            if q != 1:
                if type(q) is not int or q < 1:
                    raise self.fail(i, "quantity", f"must be a whole number >= 1, got {q!r}")
                quantity[i] = q
            v = it.get("variable", False)
            if v is not False:
                if type(v) is not bool:
                    raise self.fail(i, "variable", f"must be true or false, got {v!r}")
                variable[i] = v
        with np.errstate(over="ignore", invalid="ignore"):  # overflow is reported below, by item
            mass = np.where(mass_si, mass, mass * mass_f)
            cg = np.where(cg_si[:, None], cg, cg * len_f)
        bad = ~np.isfinite(mass) | (mass < 0)
        if bad.any():
            i = int(np.argmax(bad))
            m = raw[i]["mass"]
            if np.isfinite(mass[i]):
                why = "must be >= 0"
            elif _finite_as_written(m):
                why = f"too large: overflows in SI units ({u.mass} to kg)"
            else:
                why = "must be a finite number"
            raise self.fail(i, "mass", f"{why}, got {said(m)}")
        bad = ~np.all(np.isfinite(cg), axis=1)
        if bad.any():
            i = int(np.argmax(bad))
            c = raw[i]["cg"]
            if all(_finite_as_written(v) for v in c):
                raise self.fail(i, "cg", f"too large: overflows in SI units ({u.length} to m), got {said(c)}")
            raise self.fail(i, "cg", f"must be finite numbers, got {said(c)}")
        return self._finish(ids, mass, cg, quantity, variable, given)

    def _finish(self, ids, mass, cg, quantity, variable, given) -> tuple[list[Item], ItemArrays]:
        raw = self.raw
        n = len(raw)
        src = self.source
        u = self.units
        own = np.zeros((n, 3, 3))
        items: list[Item] = []
        mass_l = mass.tolist()
        cg_l = cg.tolist()
        q_l = quantity.tolist()
        six_rows: list[int] = []
        six_vals: list[list[float]] = []
        fast_six = self._bulk_inertia()
        for i, it in enumerate(raw):
            ident = ids[i]
            g = given[i]
            name = it.get("name", "")
            if type(name) is not str:
                raise self.fail(i, "name", f"must be a string, got {name!r}")
            group = it.get("group", "")
            if type(group) is not str:
                raise self.fail(i, "group", f"must be a string, got {group!r}")
            if "/" in group:
                deep = group_depth_problem(group)
                if deep:
                    raise self.fail(i, "group", deep)
            inertia = shape = density = None
            rotate: tuple = ()
            more = None
            if not ITEM_KEYS.issuperset(it):
                more = self._more(i, it)
            if "inertia" in it:
                if "shape" in it:
                    raise self.fail(i, "inertia", "give inertia or shape, not both")
                if g is None:
                    g = given[i] = {}
                inertia = fast_six.get(i)
                if inertia is None:
                    inertia = self._inertia(i, it["inertia"], g)
                six_rows.append(i)
                six_vals.append(list(inertia))
            if "shape" in it:
                shape = self._shape(i, it["shape"])
            if "rotate" in it:
                rotate = self._rotate(i, it["rotate"])
            if "density" in it:
                if g is None:
                    g = given[i] = {}
                density = _quantity(it["density"], "density", u.density_unit, src, item_subject(ident), "density", g)
                if not density > 0:
                    raise self.fail(i, "density", f"must be > 0, got {it['density']!r}")
            item = Item(ident, mass_l[i], tuple(cg_l[i]), name, group, int(q_l[i]), inertia, shape, rotate,
                        bool(variable[i]), density, g or {}, **(more or {}))
            items.append(item)
            if shape is not None:
                try:
                    t = shape.local_tensor(item.mass)
                except SteelyardError as exc:
                    raise exc.located(file=src, subject=item_subject(ident))
                except (OverflowError, FloatingPointError):
                    raise self.fail(i, "shape", "dimensions too large to compute an inertia") from None
                if not np.all(np.isfinite(t)):
                    raise self.fail(i, "shape", "dimensions too large to compute an inertia")
                own[i] = t
        if six_rows:
            rows = np.array(six_rows)
            own[rows] = tensor_from_six(np.array(six_vals))
            bad = realisability_problems(own[rows])
            if bad.any():
                i = int(rows[np.argmax(bad)])
                raise self.fail(i, "inertia", realisability_problem(own[i]) or "not physically possible")
        for i, item in enumerate(items):
            if item.rotate:
                r = rotation_matrix(item.rotate)
                own[i] = r @ own[i] @ r.T
        return items, ItemArrays(mass, quantity, np.asfortranarray(cg), own, variable)

    def _more(self, i: int, it: dict) -> dict:
        """The item keys beyond v1, type-checked here; their meaning is checked in core.validation."""
        out: dict = {}
        for key, types in _ITEM_MORE.items():
            if key not in it:
                continue
            v = it[key]
            if type(v) not in types:
                raise self.fail(i, key, f"must be {_KIND_WORDS[types]}, got {said(v)}")
            if _too_deep(v):
                raise self.fail(i, key, f"nested more than {_MAX_DEPTH} levels deep")
            out[key] = tuple(v) if key == "cg_table" else v
        return out

    def _bulk_inertia(self) -> dict[int, tuple]:
        """Inertia tables of bare numbers with xx, yy, zz present, converted in one array pass."""
        rows, values = [], []
        keys = set(COMPONENTS)
        for i, it in enumerate(self.raw):
            t = it.get("inertia") if type(it) is dict else None
            if type(t) is not dict or "xx" not in t or "yy" not in t or "zz" not in t or not keys.issuperset(t):
                continue
            v = [t.get(k, 0.0) for k in COMPONENTS]
            if all(type(x) is float or type(x) is int for x in v):
                rows.append(i)
                values.append(v)
        if not rows:
            return {}
        with np.errstate(over="ignore", invalid="ignore"):
            si = np.array(values, dtype=float) * unit_factor(self.units.inertia, "inertia")
        finite = np.all(np.isfinite(si), axis=1)
        return {i: tuple(row) for i, row, ok in zip(rows, si.tolist(), finite.tolist()) if ok}

    def _inertia(self, i: int, raw: object, given: dict | None) -> tuple:
        if type(raw) is not dict:
            raise self.fail(i, "inertia", "must be a table {xx, yy, zz, xy, xz, yz}")
        unknown = set(raw) - set(COMPONENTS)
        if unknown:
            raise self.fail(i, "inertia", f"unknown component {sorted(unknown)[0]!r} (use {', '.join(COMPONENTS)})")
        f = unit_factor(self.units.inertia, "inertia")
        out = []
        for key in COMPONENTS:
            v = raw.get(key, 0.0)
            if type(v) is bool or not (_is_number(v) or isinstance(v, str)):
                raise self.fail(i, f"inertia.{key}", f"must be a number or a string with unit, got {v!r}")
            x = v * f if _is_number(v) else _quantity(v, "inertia", self.units.inertia, self.source,
                                                       item_subject(self.raw[i]["id"]), f"inertia.{key}", given)
            if not math.isfinite(x):
                raise self.fail(i, f"inertia.{key}", f"must be finite, got {v!r}")
            out.append(float(x))
        for key in ("xx", "yy", "zz"):
            if key not in raw:
                raise self.fail(i, f"inertia.{key}", "required (moments xx, yy, zz; products default to 0)")
        return tuple(out)

    def _shape(self, i: int, raw: object) -> Shape:
        from steelyard.core.physics.shapes import SHAPE_PARAMS, validate_shape

        if type(raw) is not dict:
            raise self.fail(i, "shape", "must be a table with kind and dimensions")
        kind = raw.get("kind")
        if not isinstance(kind, str) or kind not in SHAPE_PARAMS:
            raise self.fail(i, "shape.kind", f"unknown shape {kind!r} (known: {', '.join(sorted(SHAPE_PARAMS))})")
        axis = raw.get("axis", "z")
        if axis not in ("x", "y", "z"):
            raise self.fail(i, "shape.axis", f"must be x, y or z, got {axis!r}")
        spec = SHAPE_PARAMS[kind]
        params: dict = {}
        subject = item_subject(self.raw[i]["id"])
        for key, value in raw.items():
            if key in ("kind", "axis"):
                continue
            if key not in spec:
                raise self.fail(i, f"shape.{key}", f"not a dimension of a {kind} (use {', '.join(spec) or 'none'})")
            dim = spec[key]
            if dim == "length":
                if type(value) is bool or not (_is_number(value) or isinstance(value, str)):
                    raise self.fail(i, f"shape.{key}", f"must be a length, got {value!r}")
                params[key] = _quantity(value, "length", self.units.length, self.source, subject, f"shape.{key}")
            else:
                count = 3 if dim == "length3" else 2
                if type(value) is not list or len(value) != count:
                    raise self.fail(i, f"shape.{key}", f"must be a list of {count} lengths, got {value!r}")
                params[key] = tuple(_quantity(v, "length", self.units.length, self.source, subject, f"shape.{key}")
                                    for v in value)
        try:
            validate_shape(kind, params)
        except SteelyardError as exc:
            raise exc.located(file=self.source, subject=subject)
        return Shape(kind, params, axis)

    def _rotate(self, i: int, raw: object) -> tuple:
        if type(raw) is not list:
            raise self.fail(i, "rotate", "must be a list of [axis, degrees] pairs")
        out = []
        for turn in raw:
            if (type(turn) is not list or len(turn) != 2 or turn[0] not in ("x", "y", "z")
                    or not _is_number(turn[1]) or not math.isfinite(turn[1])):
                raise self.fail(i, "rotate", f"each turn must be [\"x\"|\"y\"|\"z\", degrees], got {turn!r}")
            out.append((turn[0], float(turn[1])))
        return tuple(out)


def read_amount(value: object, source: str, subject: str, field: str) -> Amount:
    if type(value) is bool:
        raise SteelyardError(f"must be a fraction 0..1, a mass or a volume, got {value!r}",
                             file=source, subject=subject, field=field)
    if _is_number(value):
        if not (0.0 <= value <= 1.0):
            raise SteelyardError(f"fraction must be within 0..1, got {value!r}", file=source, subject=subject,
                                 field=field)
        return Amount("fraction", float(value))
    if isinstance(value, str):
        for kind in ("mass", "volume"):
            try:
                x = parse_quantity(value, kind)
            except UnitError:
                continue
            if x < 0:
                raise SteelyardError(f"must not be negative, got {value!r}", file=source, subject=subject,
                                     field=field)
            return Amount(kind, x, value)
        raise SteelyardError(f"cannot read {value!r} as a mass or a volume", file=source, subject=subject,
                             field=field)
    raise SteelyardError(f"must be a fraction 0..1, a mass or a volume, got {value!r}", file=source,
                         subject=subject, field=field)


def _named_tables(raw: object, table: str, source: str) -> Iterator[tuple[dict, str, str]]:
    """Each `[[table]]` entry with its name and message subject, after the checks
    every named array of tables shares: a list of tables, each with a unique,
    non-empty name."""
    if raw is None:
        return
    if type(raw) is not list:
        raise SteelyardError(f"must be an array of tables [[{table}]]", file=source, subject=table)
    names: set[str] = set()
    for k, entry in enumerate(raw):
        if type(entry) is not dict:
            raise SteelyardError("must be a table", file=source, subject=f"{table} #{k + 1}")
        name = entry.get("name")
        if type(name) is not str or not name.strip():
            raise SteelyardError("required: a non-empty string", file=source, subject=f"{table} #{k + 1}",
                                 field="name")
        subject = f"{table} {name!r}"
        if name in names:
            raise SteelyardError(f"duplicate {table} name", file=source, subject=subject, field="name")
        names.add(name)
        yield entry, name, subject


def read_loadouts(raw: object, ledger_index: dict[str, int], variable: np.ndarray, source: str) -> tuple:
    out = []
    for lo, name, subject in _named_tables(raw, "loadout", source):
        base = lo.get("base")
        if base is not None and type(base) is not str:
            raise SteelyardError(f"must be a loadout name, got {base!r}", file=source, subject=subject, field="base")
        settings = lo.get("set", {})
        if type(settings) is not dict:
            raise SteelyardError("must be a table of item id = amount", file=source, subject=subject, field="set")
        amounts = {}
        for item_id, value in settings.items():
            field = f"set.{item_id}"
            if item_id not in ledger_index:
                raise SteelyardError(f"names unknown item {item_id!r}", file=source, subject=subject, field=field)
            if not variable[ledger_index[item_id]]:
                raise SteelyardError(f"item {item_id!r} is not variable (set variable = true)", file=source,
                                     subject=subject, field=field)
            amounts[item_id] = read_amount(value, source, subject, field)
        more = _table_keys(lo, {"off": (list, str), "on": (list, str), "condition": (str,), "user": (dict,)},
                           source, subject)
        out.append(Loadout(name, amounts, base, **more))
    return tuple(out)


def read_envelopes(raw: object, units: FileUnits, source: str) -> tuple:
    out = []
    mass_f = unit_factor(units.mass, "mass")
    len_f = unit_factor(units.length, "length")
    for env, name, subject in _named_tables(raw, "envelope", source):
        axis = env.get("axis")
        if axis not in ("x", "y", "z"):
            raise SteelyardError(f"must be x, y or z, got {axis!r}", file=source, subject=subject, field="axis")
        pts = env.get("points")
        if type(pts) is not list:
            raise SteelyardError("required: a list of [cg, mass] points", file=source, subject=subject,
                                 field="points")
        points = []
        for j, p in enumerate(pts):
            if type(p) is not list or len(p) != 2:
                raise SteelyardError(f"point {j + 1} must be [cg, mass], got {p!r}", file=source, subject=subject,
                                     field="points")
            c = p[0] * len_f if _is_number(p[0]) else _quantity(p[0], "length", units.length, source, subject,
                                                                 "points")
            m = p[1] * mass_f if _is_number(p[1]) else _quantity(p[1], "mass", units.mass, source, subject,
                                                                  "points")
            if type(p[0]) is bool or type(p[1]) is bool:
                raise SteelyardError(f"point {j + 1} must be numbers", file=source, subject=subject, field="points")
            points.append((float(c), float(m)))
        problem = _envelope_problem(points)
        if problem:
            raise SteelyardError(problem, file=source, subject=subject, field="points")
        more = _table_keys(env, {"units": (str,), "conditions": (list, str), "loadouts": (list, str),
                                 "sequences": (list, str), "user": (dict,)}, source, subject)
        out.append(Envelope(name, axis, tuple(points), **more))
    return tuple(out)


_KIND_WORDS = {(str,): "text", (int, float, str): "a number or text", (dict,): "a table", (bool,): "true or false",
               (list,): "a list", (list, str): "a list of names (or one name)"}


def _table_keys(raw: dict, kinds: dict, source: str, subject: str) -> dict:
    """Keys beyond v1 of a loadout or envelope, type-checked; meaning checked in core.validation."""
    out = {}
    for key, types in kinds.items():
        if key in raw:
            v = raw[key]
            if type(v) not in types:
                raise SteelyardError(f"must be {_KIND_WORDS[types]}, got {said(v)}", file=source, subject=subject,
                                     field=key)
            if _too_deep(v):
                raise SteelyardError(f"nested more than {_MAX_DEPTH} levels deep", file=source, subject=subject,
                                     field=key)
            out[key] = v
    return out


#: top-level tables beyond v1: file name -> (Ledger field, array of tables?)
_TABLES = {"limit": ("limits", True), "mac": ("mac", False), "fuel": ("fuel", False), "growth": ("growth", False),
           "allocation": ("allocations", True), "weighing": ("weighing", False), "sequence": ("sequences", True),
           "change": ("changes", True), "snapshot": ("snapshot", False), "user": ("user", False)}


def _other_tables(data: dict, source: str) -> dict:
    out = {}
    for name, (attr, array) in _TABLES.items():
        if name not in data:
            continue
        v = data[name]
        if array:
            if type(v) is not list or not all(type(x) is dict for x in v):
                raise SteelyardError(f"must be an array of tables [[{name}]]", file=source, subject=name)
            v = tuple(v)
        elif type(v) is not dict:
            raise SteelyardError(f"must be a table [{name}]", file=source, subject=name)
        if _too_deep(v):
            raise SteelyardError(f"nested more than {_MAX_DEPTH} levels deep", file=source, subject=name)
        out[attr] = v
    return out


def _unit_notes(data: dict, units: FileUnits) -> tuple[str, ...]:
    """What a reader should be told although the file is valid.

    With no `inertia` in [units], bare inertia numbers are kg·m² (the v1
    contract) even in a file whose masses are pounds and lengths inches: a
    factor of about 3,400 if the author meant lb·in². Said once, where it matters.
    """
    given = data.get("units")
    if isinstance(given, dict) and "inertia" in given:
        return ()
    if (units.mass, units.length) == ("kg", "m"):
        return ()
    for it in data.get("item", ()):
        t = it.get("inertia") if isinstance(it, dict) else None
        if isinstance(t, dict) and any(type(v) in (int, float) for v in t.values()):
            return (f"[units] gives mass in {units.mass} and length in {units.length} but no inertia unit: "
                    "bare inertia numbers are read as kg*m**2; write inertia = \"...\" in [units] to say which",)
    return ()


def reading_notes(ledger: Ledger) -> tuple[str, ...]:
    """Notes the reader made about a valid file (see `_unit_notes`)."""
    return ledger.__dict__.get("_read_notes", ())


def _envelope_problem(points: list) -> str | None:
    from steelyard.core.limits.envelope import envelope_problem

    return envelope_problem(np.asarray(points, dtype=float).reshape(-1, 2))


def ledger_from_data(data: object, *, source: str, progress: Progress | None = None) -> Ledger:
    """Build a ledger from parsed TOML, or raise a located SteelyardError."""
    try:
        return _ledger_from_data(data, source=source, progress=progress)
    except OverflowError:  # an integer beyond the float range somewhere: find it properly
        try:
            tamed = _tame_big_ints(data)
        except RecursionError:
            raise FormatError("nested too deeply", file=source) from None
        return _ledger_from_data(tamed, source=source, progress=progress)


def _ledger_from_data(data: object, *, source: str, progress: Progress | None = None) -> Ledger:
    if not isinstance(data, dict):
        raise FormatError("not a steelyard ledger", file=source)
    version = data.get("steelyard")
    if version is None:
        raise FormatError("not a steelyard ledger: missing format version 'steelyard = 1'", file=source)
    if type(version) is not int:
        raise FormatError(f"format version must be a whole number, got {version!r}", file=source)
    if version > FORMAT_VERSION:
        raise FormatError(f"format version {version} is newer than this program reads ({FORMAT_VERSION}); "
                          "upgrade steelyard", file=source)
    if version < 1:
        raise FormatError(f"unknown format version {version}", file=source)
    try:
        check_document(data)
    except SteelyardError as exc:
        raise exc.located(file=source)
    units = read_units(data.get("units"), source)
    frame = read_frame(data.get("frame"), source)
    raw_items = data.get("item", [])
    if type(raw_items) is not list:
        raise SteelyardError("must be an array of tables [[item]]", file=source, subject="item")
    items, arrays = _Items(raw_items, units, source, progress).read()
    index = {it.id: i for i, it in enumerate(items)}
    loadouts = read_loadouts(data.get("loadout"), index, arrays.variable, source)
    envelopes = read_envelopes(data.get("envelope"), units, source)
    ledger = Ledger(tuple(items), units, frame, loadouts, envelopes, **_other_tables(data, source))
    ledger.__dict__["index"] = index
    ledger = with_arrays(ledger, arrays)
    notes = _unit_notes(data, units)
    if notes:
        ledger.__dict__["_read_notes"] = notes
    try:
        validate_document(ledger)
    except SteelyardError as exc:
        raise exc.located(file=source)
    return ledger
