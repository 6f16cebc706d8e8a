"""The [[item]] array -> items and their numpy columns, in bulk.

Bare numbers are converted to SI with one factor per column; only values
written as strings with a unit go through the (cached) pint parser. Every
problem is one located SteelyardError naming the file, the item and the field.
"""

from __future__ import annotations

import math
from collections.abc import Callable

import numpy as np

from steelyard.core.document.model import NO_UNITS, Item, ItemArrays, FileUnits, Shape, sparse_own
from steelyard.core.errors import SteelyardError, item_subject, said
from steelyard.core.physics.groups import group_depth_problem
from steelyard.core.physics.inertia import COMPONENTS, realisability_problem, realisability_problems, tensor_from_six
from steelyard.core.physics.rotation import rotation_matrix
from steelyard.core.units import unit_factor
from steelyard.io.ledger.read_values import (KIND_WORDS, MAX_DEPTH, finite_as_written, is_number, si_value,
                                             too_deep)

Progress = Callable[[str, float], None]

#: the v1 contract's item keys; an item with only these skips the per-key reading of the rest
ITEM_KEYS = {"id", "name", "group", "mass", "cg", "quantity", "inertia", "shape", "rotate",
             "variable", "density"}
#: item keys beyond v1 -> the TOML types each may hold (deeper checks: core.validation)
_ITEM_MORE = {"maturity": (str,), "growth": (int, float, str), "tolerance": (dict,), "removable": (bool,),
              "cg_table": (list,), "loaded": (dict,), "user": (dict,)}


class ItemsReader:
    """Bulk reader of the [[item]] array."""

    def __init__(self, raw_items: list, units: FileUnits, source: str, progress: Progress | None,
                 seen: dict[str, int] | None = None):
        self.raw = raw_items
        #: id -> row of the ids read so far (shared by the pieces of one file)
        self.seen: dict[str, int] = {} if seen is None else seen
        self.units = units
        self.source = source
        self.progress = progress

    def fail(self, i: int, field: str | None, message: str) -> SteelyardError:
        raw = self.raw[i]
        ident = raw.get("id") if isinstance(raw, dict) else None
        subject = item_subject(ident if isinstance(ident, str) and ident else i + 1)
        return SteelyardError(message, file=self.source, subject=subject, field=field)

    def read(self) -> tuple[list[Item], ItemArrays]:
        from steelyard.io.ledger.read_items_fast import read_fast

        done = read_fast(self)  # column passes when every row is regular; None: read item by item
        if done is not None:
            return done
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
        seen = self.seen
        base = len(seen)
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
            seen[ident] = base + i
            ids[i] = ident
            m = it.get("mass")
            if type(m) is float or type(m) is int:
                mass[i] = m
            elif m is None:
                raise self.fail(i, "mass", "required")
            else:
                g: dict[str, str] = {}
                subject = item_subject(ident)
                mass[i] = si_value(m, "mass", u.mass, src, subject, "mass", g)
                mass_si[i] = True
                given[i] = g
            c = it.get("cg")
            if type(c) is not list or len(c) != 3:
                if c is None:
                    raise self.fail(i, "cg", "required: [x, y, z]")
                raise self.fail(i, "cg", f"must be a list of 3 numbers [x, y, z], got {c!r}"[:200])
            c0, c1, c2 = c
            if is_number(c0) and is_number(c1) and is_number(c2):
                cg[i] = c
            else:
                subject = item_subject(ident)
                for k, v in enumerate(c):
                    if type(v) is bool or not (is_number(v) or isinstance(v, str)):
                        raise self.fail(i, "cg", f"element {k + 1} must be a length, got {v!r}")
                g = given[i] if given[i] is not None else {}
                cg[i] = [v * len_f if is_number(v) else
                         si_value(v, "length", u.length, src, subject, f"cg.{k}", g)
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
            elif finite_as_written(m):
                why = f"too large: overflows in SI units ({u.mass} to kg)"
            else:
                why = "must be a finite number"
            raise self.fail(i, "mass", f"{why}, got {said(m)}")
        bad = ~np.all(np.isfinite(cg), axis=1)
        if bad.any():
            i = int(np.argmax(bad))
            c = raw[i]["cg"]
            if all(finite_as_written(v) for v in c):
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
                density = si_value(it["density"], "density", u.density_unit, src, item_subject(ident), "density", g)
                if not density > 0:
                    raise self.fail(i, "density", f"must be > 0, got {it['density']!r}")
            item = Item(ident, mass_l[i], tuple(cg_l[i]), name, group, int(q_l[i]), inertia, shape, rotate,
                        bool(variable[i]), density, g or NO_UNITS, **(more or {}))
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
        rows, values = sparse_own(own)
        return items, ItemArrays.sparse(mass, quantity, np.asfortranarray(cg), variable, rows, values)

    def _more(self, i: int, it: dict) -> dict:
        """The item keys beyond v1, type-checked here; their meaning is checked in core.validation."""
        out: dict = {}
        for key, types in _ITEM_MORE.items():
            if key not in it:
                continue
            v = it[key]
            if type(v) not in types:
                raise self.fail(i, key, f"must be {KIND_WORDS[types]}, got {said(v)}")
            if too_deep(v):
                raise self.fail(i, key, f"nested more than {MAX_DEPTH} levels deep")
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
            if type(v) is bool or not (is_number(v) or isinstance(v, str)):
                raise self.fail(i, f"inertia.{key}", f"must be a number or a string with unit, got {v!r}")
            x = v * f if is_number(v) else si_value(v, "inertia", self.units.inertia, self.source,
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
                if type(value) is bool or not (is_number(value) or isinstance(value, str)):
                    raise self.fail(i, f"shape.{key}", f"must be a length, got {value!r}")
                params[key] = si_value(value, "length", self.units.length, self.source, subject, f"shape.{key}")
            else:
                count = 3 if dim == "length3" else 2
                if type(value) is not list or len(value) != count:
                    raise self.fail(i, f"shape.{key}", f"must be a list of {count} lengths, got {value!r}")
                params[key] = tuple(si_value(v, "length", self.units.length, self.source, subject, f"shape.{key}")
                                    for v in value)
        try:
            validate_shape(kind, params)
        except SteelyardError as exc:
            raise exc.located(file=self.source, subject=subject)
        return Shape(kind, params, axis, axis_written="axis" in raw)

    def _rotate(self, i: int, raw: object) -> tuple:
        if type(raw) is not list:
            raise self.fail(i, "rotate", "must be a list of [axis, degrees] pairs")
        out = []
        for turn in raw:
            if (type(turn) is not list or len(turn) != 2 or turn[0] not in ("x", "y", "z")
                    or not is_number(turn[1]) or not math.isfinite(turn[1])):
                raise self.fail(i, "rotate", f"each turn must be [\"x\"|\"y\"|\"z\", degrees], got {turn!r}")
            out.append((turn[0], float(turn[1])))
        return tuple(out)
