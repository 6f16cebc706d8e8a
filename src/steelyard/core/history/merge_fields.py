"""How each kind of ledger entry splits into fields for a three-way merge, and joins again.

A merge decides field by field: ours changed an item's mass, theirs its
name, and both are kept. Each kind of entry (item, loadout, envelope, and
the named tables held as written: limit, allocation, sequence) says here
what its fields are (`split`), what a field *means* (`meaning`: SI numbers,
sets of names, load amounts), so that "41.5 kg" and 41.5 in a file in kg are
no change, and how chosen fields make an entry again (`join`).

Bare numbers in a table held as written are in its file's `[units]`. A field
taken from a side whose units differ from the result's has each of those
numbers pinned with its own unit (core.document.pinning), so it keeps its
meaning in the merged file.
"""

from __future__ import annotations

from collections.abc import Mapping

from steelyard.core.document.model import Envelope, FileUnits, Item, Loadout
from steelyard.core.document.pinning import DIMENSIONS, pin_cg_table, pin_units, unit_for
from steelyard.core.errors import SteelyardError
from steelyard.core.history.diff_tables import amount_value
from steelyard.core.units import parse_quantity, unit_factor

#: fields of an item beside its id, in the writer's order
ITEM_FIELDS = ("name", "group", "mass", "cg", "quantity", "inertia", "shape", "rotate", "variable", "density",
               "maturity", "growth", "tolerance", "removable", "cg_table", "loaded", "user")
#: keys holding sets of names, written as one string or a list
NAME_SETS = ("conditions", "loadouts", "sequences", "off", "on")

Chosen = Mapping[str, tuple[object, FileUnits]]  # field -> (raw value, units of the side it came from)


def names(value: object) -> object:
    """A set of names as a sorted list (one string or a list of them); anything else as written."""
    if isinstance(value, str):
        value = [value]
    if isinstance(value, (list, tuple)) and all(isinstance(x, str) for x in value):
        return sorted(set(value))
    return value


def si(value: object, dimension: str, units: FileUnits) -> object:
    """A value held as written, in SI: bare numbers in the file's unit, strings with their own."""
    if type(value) in (int, float):
        return float(value) * unit_factor(unit_for(dimension, units), dimension)
    if isinstance(value, str):
        try:
            return parse_quantity(value, dimension)
        except SteelyardError:
            return value  # "5 %", "all": compared as written
    if isinstance(value, (list, tuple)):
        return [si(v, dimension, units) for v in value]
    if isinstance(value, Mapping):
        return {k: si(v, dimension, units) for k, v in value.items()}
    return value


def table_meaning(table: Mapping, kind: str, units: FileUnits) -> dict:
    """A table held as written with every number of a known dimension in SI (the walk pin_units makes)."""
    dims = DIMENSIONS.get(kind, {})
    out = {}
    for k, v in table.items():
        if k in dims:
            out[k] = si(v, dims[k], units)
        elif k in ("point", "on_board", "missing") and isinstance(v, list):
            out[k] = [table_meaning(e, kind, units) if isinstance(e, Mapping) else e for e in v]
        else:
            out[k] = v
    return out


class ItemKind:
    """[[item]] by id. A field's raw value is (value, the units its text was written in)."""

    table = "item"

    @staticmethod
    def key(entry: Item, k: int) -> str:
        return entry.id

    @staticmethod
    def split(entry: Item) -> dict:
        g = entry.given_units
        return {f: (getattr(entry, f), {k: u for k, u in g.items() if k.split(".", 1)[0] == f} if g else {})
                for f in ITEM_FIELDS}

    @staticmethod
    def meaning(field: str, raw: object, units: FileUnits) -> object:
        if raw is None:
            return None
        v = raw[0]
        if v is None:
            return None
        if field == "shape":
            return {"kind": v.kind, "axis": v.axis, **{k: list(p) if isinstance(p, tuple) else p
                                                        for k, p in v.params.items()}}
        if field == "rotate":
            return [list(turn) for turn in v]
        if field == "tolerance" and isinstance(v, Mapping):
            return table_meaning(v, "tolerance", units)
        if field == "cg_table":
            return [[r[0], *si(list(r[1:]), "length", units)] if isinstance(r, list) and r else r for r in v]
        if field == "growth" and isinstance(v, str):
            try:
                return parse_quantity(v, "dimensionless")
            except SteelyardError:
                return v
        return v

    @staticmethod
    def join(key: str, chosen: Chosen, units: FileUnits) -> Item:
        values: dict = {}
        given: dict = {}
        for f, (raw, side) in chosen.items():
            v, g = raw
            if side != units and v:
                if f == "tolerance" and isinstance(v, Mapping):
                    v = pin_units(v, "tolerance", side)
                elif f == "cg_table":
                    v = tuple(pin_cg_table(v, side))
            values[f] = v
            given.update(g)
        return Item(id=key, given_units=given, **values)


class LoadoutKind:
    """[[loadout]] by name; each amount in `[loadout.set]` is a field of its own."""

    table = "loadout"

    @staticmethod
    def key(entry: Loadout, k: int) -> str:
        return entry.name

    @staticmethod
    def split(entry: Loadout) -> dict:
        out: dict = {"base": entry.base, "condition": entry.condition, "off": entry.off, "on": entry.on,
                     "user": entry.user}
        out.update((f"set.{item_id}", amount) for item_id, amount in entry.set.items())
        return out

    @staticmethod
    def meaning(field: str, raw: object, units: FileUnits) -> object:
        if field.startswith("set."):
            return amount_value(raw)
        return names(raw) if field in NAME_SETS else raw

    @staticmethod
    def join(key: str, chosen: Chosen, units: FileUnits) -> Loadout:
        amounts = {f[4:]: v for f, (v, _) in chosen.items() if f.startswith("set.") and v is not None}
        plain = {f: v for f, (v, _) in chosen.items() if not f.startswith("set.")}
        return Loadout(key, amounts, **plain)


def _mac(units: str | None) -> bool:
    return units in ("%mac", "%MAC")


class EnvelopeKind:
    """[[envelope]] by name. Points and `units` are one field: a %MAC envelope's CG numbers are percentages."""

    table = "envelope"

    @staticmethod
    def key(entry: Envelope, k: int) -> str:
        return entry.name

    @staticmethod
    def split(entry: Envelope) -> dict:
        return {"axis": entry.axis, "points": (entry.points, entry.units), "conditions": entry.conditions,
                "loadouts": entry.loadouts, "sequences": entry.sequences, "user": entry.user}

    @staticmethod
    def meaning(field: str, raw: object, units: FileUnits) -> object:
        if field == "points" and raw is not None:
            points, given = raw
            if _mac(given):  # the reader took the percentages as lengths in the file's unit
                f = unit_factor(units.length, "length")
                return ["%mac", [[c / f, m] for c, m in points]]
            return [given, [list(p) for p in points]]
        return names(raw) if field in NAME_SETS else raw

    @staticmethod
    def join(key: str, chosen: Chosen, units: FileUnits) -> Envelope:
        values = {f: v for f, (v, _) in chosen.items()}
        (points, given), side = chosen["points"]
        if _mac(given) and side.length != units.length:
            scale = unit_factor(units.length, "length") / unit_factor(side.length, "length")
            points = tuple((c * scale, m) for c, m in points)
        values["points"], values["units"] = points, given
        return Envelope(key, **values)


class HeldKind:
    """A named table held as written ([[limit]], [[allocation]], [[sequence]]): its keys are the fields."""

    def __init__(self, table: str, key_field: str) -> None:
        self.table = table
        self.key_field = key_field
        self.dims = DIMENSIONS.get(table, {})

    def key(self, entry: Mapping, k: int) -> str:
        v = entry.get(self.key_field)
        return v if isinstance(v, str) else f"#{k + 1}"

    def split(self, entry: Mapping) -> dict:
        return {f: v for f, v in entry.items() if f != self.key_field}

    def meaning(self, field: str, raw: object, units: FileUnits) -> object:
        if raw is None:
            return None
        if field in self.dims:
            return si(raw, self.dims[field], units)
        return names(raw) if field in NAME_SETS else raw

    def join(self, key: str, chosen: Chosen, units: FileUnits) -> dict:
        out: dict = {} if key.startswith("#") else {self.key_field: key}
        for f, (v, side) in chosen.items():
            if v is None:
                continue
            out[f] = pin_units({f: v}, self.table, side)[f] if (side != units and f in self.dims) else v
        return out


ITEM = ItemKind()
LOADOUT = LoadoutKind()
ENVELOPE = EnvelopeKind()
LIMIT = HeldKind("limit", "name")
ALLOCATION = HeldKind("allocation", "group")
SEQUENCE = HeldKind("sequence", "name")
ASSEMBLY = HeldKind("assembly", "id")
