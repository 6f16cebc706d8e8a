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
from collections.abc import Iterator

import numpy as np

from steelyard.core.document.model import DIRECTIONS, Amount, Envelope, FileUnits, Frame, Ledger, Loadout, with_arrays
from steelyard.core.document.schema import check_document, unknown_key
from steelyard.core.errors import FormatError, SteelyardError, UnitError, said
from steelyard.core.units import parse_quantity, unit_factor
from steelyard.core.validation import validate_document
from steelyard.io.ledger.read_items import ItemsReader, Progress  # noqa: F401 (Progress: public)
from steelyard.io.ledger.read_values import KIND_WORDS, MAX_DEPTH, is_number, si_value, too_deep

FORMAT_VERSION = 1
_AXIS_VECTOR = {"fwd": (1, 0, 0), "aft": (-1, 0, 0), "right": (0, 1, 0), "left": (0, -1, 0),
                "down": (0, 0, 1), "up": (0, 0, -1)}


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


def read_amount(value: object, source: str, subject: str, field: str) -> Amount:
    if type(value) is bool:
        raise SteelyardError(f"must be a fraction 0..1, a mass or a volume, got {value!r}",
                             file=source, subject=subject, field=field)
    if is_number(value):
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


def read_loadouts(raw: object, ledger_index: dict[str, int], variable: np.ndarray, source: str,
                  foreign: tuple[str, ...] = ()) -> tuple:
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
            if foreign and item_id not in ledger_index and item_id.startswith(foreign):
                amounts[item_id] = read_amount(value, source, subject, field)  # inside an assembly not read
                continue
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
            c = p[0] * len_f if is_number(p[0]) else si_value(p[0], "length", units.length, source, subject,
                                                                 "points")
            m = p[1] * mass_f if is_number(p[1]) else si_value(p[1], "mass", units.mass, source, subject,
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


def _table_keys(raw: dict, kinds: dict, source: str, subject: str) -> dict:
    """Keys beyond v1 of a loadout or envelope, type-checked; meaning checked in core.validation."""
    out = {}
    for key, types in kinds.items():
        if key in raw:
            v = raw[key]
            if type(v) not in types:
                raise SteelyardError(f"must be {KIND_WORDS[types]}, got {said(v)}", file=source, subject=subject,
                                     field=key)
            if too_deep(v):
                raise SteelyardError(f"nested more than {MAX_DEPTH} levels deep", file=source, subject=subject,
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
        if too_deep(v):
            raise SteelyardError(f"nested more than {MAX_DEPTH} levels deep", file=source, subject=name)
        out[attr] = v
    return out


def _unit_notes(data: dict, units: FileUnits, bare_inertia: bool | None = None) -> tuple[str, ...]:
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
    if bare_inertia is None:
        bare_inertia = has_bare_inertia(data.get("item", ()))
    if bare_inertia:
        return (f"[units] gives mass in {units.mass} and length in {units.length} but no inertia unit: "
                "bare inertia numbers are read as kg*m**2; write inertia = \"...\" in [units] to say which",)
    return ()


def has_bare_inertia(raw_items) -> bool:
    """Whether some item gives an inertia component as a bare number (see `_unit_notes`)."""
    for it in raw_items:
        t = it.get("inertia") if isinstance(it, dict) else None
        if isinstance(t, dict) and any(type(v) in (int, float) for v in t.values()):
            return True
    return False


def reading_notes(ledger: Ledger) -> tuple[str, ...]:
    """Notes the reader made about a valid file (see `_unit_notes`)."""
    return ledger.__dict__.get("_read_notes", ())


def _envelope_problem(points: list) -> str | None:
    from steelyard.core.limits.envelope import envelope_problem

    return envelope_problem(np.asarray(points, dtype=float).reshape(-1, 2))


def ledger_from_data(data: object, *, source: str, progress: Progress | None = None, tree=None,
                     tree_source=None) -> Ledger:
    """Build a ledger from parsed TOML, or raise a located SteelyardError.

    A file that places other ledgers ([[assembly]]) is read as a tree: `tree`
    (io.ledger.tree.TreeReader) reads the placed files from `tree_source`'s
    folder (default: the file `source` names, on disk). `tree=DOCUMENT` reads
    the file alone, as written (a merge, a layout check): its placements are
    checked but not read, and ids inside them are taken on trust.
    """
    try:
        return _ledger_from_data(data, source=source, progress=progress, tree=tree, tree_source=tree_source)
    except OverflowError:  # an integer beyond the float range somewhere: find it properly
        try:
            tamed = _tame_big_ints(data)
        except RecursionError:
            raise FormatError("nested too deeply", file=source) from None
        return _ledger_from_data(tamed, source=source, progress=progress, tree=tree, tree_source=tree_source)


#: `tree=DOCUMENT`: read a file with assemblies as the document it is, without its placed files
DOCUMENT = "document"


def _assemblies(data: dict, source: str) -> tuple:
    raw = data.get("assembly")
    if raw is None:
        return ()
    if type(raw) is not list or not all(type(x) is dict for x in raw):
        raise SteelyardError("must be an array of tables [[assembly]]", file=source, subject="assembly")
    if too_deep(raw):
        raise SteelyardError(f"nested more than {MAX_DEPTH} levels deep", file=source, subject="assembly")
    return tuple(raw)


def _placed(assemblies: tuple, items: list, arrays, units: FileUnits, frame: Frame, source: str, tree,
            tree_source):
    """(items, arrays, placed) with every assembly's items placed after the file's own."""
    from steelyard.io.ledger.tree import DiskSource, tree_for

    if tree_source is None:
        tree_source = DiskSource(source)
    if tree is None:
        tree = tree_for(tree_source)
    document = Ledger(tuple(items), units, frame, assemblies=assemblies)
    return tree.resolve(document, tree_source, items, arrays)


def _ledger_from_data(data: object, *, source: str, progress: Progress | None = None, tree=None,
                      tree_source=None, read_items=None, more_rows=None) -> Ledger:
    """`more_rows`: the items' `core.document.model.more_rows`, when the caller knows them already
    (io.ledger.read_reuse); kept with the ledger unless rows were placed from assemblies."""
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
    if read_items is not None:  # read piece by piece already (io.ledger.read_stream)
        items, arrays, bare_inertia, index = read_items
    else:
        raw_items = data.get("item", [])
        if type(raw_items) is not list:
            raise SteelyardError("must be an array of tables [[item]]", file=source, subject="item")
        items, arrays = ItemsReader(raw_items, units, source, progress).read()
        bare_inertia = index = None
    assemblies = _assemblies(data, source)
    placed = ()
    foreign: tuple[str, ...] = ()
    if assemblies and tree == DOCUMENT:
        from steelyard.core.assembly.placement import read_placements

        try:
            foreign = tuple(f"{p.id}/" for p in read_placements(Ledger(units=units, assemblies=assemblies),
                                                                 {it.id for it in items}))
        except SteelyardError as exc:
            raise exc.located(file=source)
    elif assemblies:
        items, arrays, placed = _placed(assemblies, items, arrays, units, frame, source, tree, tree_source)
    if index is None or placed:
        index = {it.id: i for i, it in enumerate(items)}
    loadouts = read_loadouts(data.get("loadout"), index, arrays.variable, source, foreign)
    envelopes = read_envelopes(data.get("envelope"), units, source)
    ledger = Ledger(tuple(items), units, frame, loadouts, envelopes, **_other_tables(data, source),
                    assemblies=assemblies, placed=placed)
    ledger.__dict__["index"] = index
    ledger = with_arrays(ledger, arrays)
    if more_rows is not None and not placed:
        ledger.__dict__["_more_rows"] = more_rows
    notes = _unit_notes(data, units, bare_inertia)
    if notes:
        ledger.__dict__["_read_notes"] = notes
    if foreign:  # read alone: what refers into its assemblies is checked when the tree is read
        return ledger
    try:
        validate_document(ledger)
    except SteelyardError as exc:
        raise exc.located(file=source)
    return ledger
