"""Comparing the definitions beside the items: envelopes, loadouts, limits and every other table.

A limit, an allocation or a `[mac]` that changes is as much a change to a
ledger as an item's mass, and more dangerous when missed. Each definition is
compared by what it *means*, read through the module that owns it
(`core.limits.rules`, `core.control.growth`, `core.loading.sequence`,
`core.control.weighing`): a `max_mass = 1760.0` in a file in pounds and a
`max_mass = "1760 lb"` elsewhere are the same limit; 7 kg against 6.5 kg is
not. Named definitions match by name (limits, sequences, envelopes,
loadouts) or group (allocations); single tables compare as wholes.

A definition's meaning is a flat set of fields, each with a *kind* saying
what its value is: "mass", "length", "inertia", "volume", "density" (SI
numbers, or lists / component tables of them), "fraction", "points"
(envelope vertices), "amount" (a load amount), "step" (a sequence step),
"names" / "groups" (sets of names, written as a string or a list) and
"plain" (as written). A field's key is its file name plus the SI unit of
its kind (`max_mass_kg`), which is what `diff --json` shows; the text
report names it as in the file (`max_mass`) and shows the value in display
units (core.history.diff_text).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

from steelyard.core.control.growth import allocations, growth_table
from steelyard.core.document.model import Amount, Envelope, FileUnits, Ledger, Loadout
from steelyard.core.errors import SteelyardError
from steelyard.core.history.diff_equal import same
from steelyard.core.limits.rules import SCOPE_KEYS, limit_specs, mac_reference
from steelyard.core.physics.inertia import COMPONENTS
from steelyard.core.units import parse_quantity, to_si, unit_factor

#: the SI unit a field key names, by kind (kinds not listed add nothing)
KIND_SUFFIX = {"mass": "_kg", "length": "_m", "inertia": "_kg_m2", "volume": "_m3", "density": "_kg_m3",
               "points": "_m_kg", "points_mac": "_percent_mac_kg"}
#: kinds whose values are SI numbers (or lists / component tables of them)
QUANTITIES = ("mass", "length", "inertia", "volume", "density")

Fields = Mapping[str, tuple[object, object]]


@dataclass(frozen=True)
class DefinitionChanges:
    """Named definitions added, removed or changed field by field (field key -> (old, new))."""

    added: tuple[str, ...] = ()
    removed: tuple[str, ...] = ()
    changed: tuple[tuple[str, Fields], ...] = ()
    kinds: Mapping[str, str] = field(default_factory=dict)  # field key -> kind; absent: "plain"

    def __bool__(self) -> bool:
        return bool(self.added or self.removed or self.changed)


@dataclass(frozen=True)
class TableChange:
    """A single table that differs: every differing field; a whole side is None when the table is absent."""

    status: str  # "added" | "removed" | "changed"
    fields: Fields
    kinds: Mapping[str, str] = field(default_factory=dict)


#: named definitions and single tables compared beside envelopes and loadouts, in report order
NAMED = ("limits", "allocations", "sequences")
SINGLE = ("mac", "fuel", "growth", "weighing", "user")


@dataclass(frozen=True)
class TableChanges:
    limits: DefinitionChanges = DefinitionChanges()
    allocations: DefinitionChanges = DefinitionChanges()
    sequences: DefinitionChanges = DefinitionChanges()
    mac: TableChange | None = None
    fuel: TableChange | None = None
    growth: TableChange | None = None
    weighing: TableChange | None = None
    user: TableChange | None = None
    #: tables left out because one side cannot have them (a snapshot has no fuel and no sequences)
    not_compared: tuple[str, ...] = ()

    def __bool__(self) -> bool:
        return any(getattr(self, k) for k in NAMED + SINGLE)


# --------------------------------------------------------------------------- meaning of one definition


class Meaning:
    """The fields of one definition: key -> value, and key -> kind."""

    def __init__(self) -> None:
        self.values: dict[str, object] = {}
        self.kinds: dict[str, str] = {}

    def put(self, label: str, value: object, kind: str = "plain") -> None:
        if value is None:
            return
        key = label + KIND_SUFFIX.get(kind, "")
        self.values[key] = value
        self.kinds[key] = kind


def _names(value: object, strip: bool = False) -> object:
    """A set of names written as one string or a list (none given: the empty set); anything else as written."""
    if value is None:
        return []
    if isinstance(value, str):
        value = [value]
    if isinstance(value, (list, tuple)) and all(isinstance(x, str) for x in value):
        return sorted({x.strip("/") if strip else x for x in value})
    return value


def same_field(kind: str, a: object, b: object) -> bool:
    if kind in ("names", "groups"):
        return _names(a, kind == "groups") == _names(b, kind == "groups")
    return same(a, b)


def _num(x) -> float | None:
    x = float(x)
    return x if x == x else None


def _components(row) -> dict | None:
    out = {c: float(v) for c, v in zip(COMPONENTS, row) if v == v}
    return out or None


def _field_changes(x: Meaning | None, y: Meaning | None, kinds: dict[str, str]) -> dict:
    xv = x.values if x is not None else {}
    yv = y.values if y is not None else {}
    out = {}
    for key in list(xv) + [k for k in yv if k not in xv]:
        kind = (x.kinds if key in xv else y.kinds)[key]  # type: ignore[union-attr]
        u, v = xv.get(key), yv.get(key)
        if not same_field(kind, u, v):
            out[key] = (u, v)
            kinds[key] = kind
    return out


def compare_named(a: Mapping[str, Meaning], b: Mapping[str, Meaning]) -> DefinitionChanges:
    kinds: dict[str, str] = {}
    changed = []
    for name, x in a.items():
        if name in b:
            fields = _field_changes(x, b[name], kinds)
            if fields:
                changed.append((name, fields))
    return DefinitionChanges(tuple(n for n in b if n not in a), tuple(n for n in a if n not in b), tuple(changed),
                             kinds)


def compare_single(a: Meaning | None, b: Meaning | None) -> TableChange | None:
    kinds: dict[str, str] = {}
    fields = _field_changes(a, b, kinds)
    if not fields and (a is None) == (b is None):
        return None
    return TableChange("added" if a is None else "removed" if b is None else "changed", fields, kinds)


# --------------------------------------------------------------------------- envelopes and loadouts


def envelope_meaning(ledger: Ledger, env: Envelope) -> Meaning:
    """Axis, vertices (a %MAC envelope's CG values as the percentages written), scope, units, user data."""
    m = Meaning()
    m.put("axis", env.axis)
    pts = [[float(c), float(w)] for c, w in env.points]
    if env.units in ("%mac", "%MAC"):
        f = unit_factor(ledger.units.length, "length")  # the reader took the percentages as lengths
        m.put("points", [[c / f, w] for c, w in pts], "points_mac")
    else:
        m.put("points", pts, "points")
    for key in SCOPE_KEYS:
        m.put(key, getattr(env, key), "names")
    m.put("units", "%mac" if env.units in ("%mac", "%MAC") else None)
    m.put("user", env.user)
    return m


def amount_value(a: Amount | None) -> dict | None:
    if a is None:
        return None
    key = {"fraction": "fraction", "mass": "mass_kg", "volume": "volume_m3"}.get(a.kind, a.kind)
    return {key: float(a.value)}


def loadout_meaning(lo: Loadout) -> Meaning:
    m = Meaning()
    m.put("base", lo.base)
    for item_id, amount in lo.set.items():
        m.put(f"set.{item_id}", amount_value(amount), "amount")
    m.put("condition", lo.condition)
    m.put("off", lo.off, "names")
    m.put("on", lo.on, "names")
    m.put("user", lo.user)
    return m


def envelope_definitions(a: Ledger, b: Ledger) -> DefinitionChanges:
    return compare_named({e.name: envelope_meaning(a, e) for e in a.envelopes},
                         {e.name: envelope_meaning(b, e) for e in b.envelopes})


def loadout_definitions(a: Ledger, b: Ledger) -> DefinitionChanges:
    return compare_named({lo.name: loadout_meaning(lo) for lo in a.loadouts},
                         {lo.name: loadout_meaning(lo) for lo in b.loadouts})


# --------------------------------------------------------------------------- the other tables


def limit_meanings(ledger: Ledger) -> dict[str, Meaning]:
    """Each [[limit]] by name: its bounds in SI (core.limits.rules), scope and user data as written."""
    raw = {r.get("name"): r for r in ledger.limits if isinstance(r, Mapping)}
    out = {}
    for spec in limit_specs(ledger):
        m = Meaning()
        if spec.kind == "mass":
            m.put("min_mass", _num(spec.lo[0]), "mass")
            m.put("max_mass", _num(spec.hi[0]), "mass")
        elif spec.kind == "inertia":
            m.put("min_inertia", _components(spec.lo), "inertia")
            m.put("max_inertia", _components(spec.hi), "inertia")
        else:
            m.put("max_cg_offset", _num(spec.hi[0]), "length")
            m.put("axis", "xyz"[spec.axis])
            m.put("through", [float(v) for v in spec.through], "length")
        entry = raw.get(spec.name, {})
        for key in SCOPE_KEYS:
            m.put(key, entry.get(key), "names")
        m.put("user", entry.get("user"))
        out[spec.name] = m
    return out


def allocation_meanings(ledger: Ledger) -> dict[str, Meaning]:
    """Each [[allocation]] by group path: the not-to-exceed mass in kg (core.control.growth)."""
    out = {}
    for (group, kg), entry in zip(allocations(ledger), ledger.allocations):
        m = Meaning()
        m.put("mass", float(kg), "mass")
        m.put("user", entry.get("user"))
        out[group] = m
    return out


def _amount(raw: object) -> object:
    """A sequence amount: a bare number is a fraction; a mass or a volume in SI; else as written ("all")."""
    if isinstance(raw, (int, float)) and not isinstance(raw, bool):
        return {"fraction": float(raw)}
    if isinstance(raw, str):
        for dimension, key in (("mass", "mass_kg"), ("volume", "volume_m3")):
            try:
                return {key: parse_quantity(raw, dimension)}
            except SteelyardError:
                pass
    return raw


def sequence_meanings(ledger: Ledger) -> dict[str, Meaning]:
    """Each [[sequence]] by name: its start, end condition and every step with amounts in SI."""
    if not ledger.sequences:
        return {}
    from steelyard.core.loading.sequence import sequence_specs  # here: most ledgers have no sequence

    raw = {r.get("name"): r for r in ledger.sequences if isinstance(r, Mapping)}
    out = {}
    for spec in sequence_specs(ledger):
        m = Meaning()
        m.put("loadout", spec.loadout)
        m.put("end_condition", spec.end_condition)
        for s in spec.steps:
            step = {"kind": s.kind, "name": s.label, "samples": s.samples,
                    "items": {item_id: None if a is None else _amount(a) for item_id, a in s.targets}}
            if s.total is not None:
                step["amount"] = _amount(s.total)
            m.put(f"step {s.index}", step, "step")
        m.put("user", raw.get(spec.name, {}).get("user"))
        out[spec.name] = m
    return out


def mac_meaning(ledger: Ledger) -> Meaning | None:
    ref = mac_reference(ledger)
    if ref is None:
        return None
    m = Meaning()
    m.put("lemac", ref.lemac, "length")
    m.put("length", ref.length, "length")
    return m


def fuel_meaning(ledger: Ledger) -> Meaning | None:
    if ledger.fuel is None:
        return None
    m = Meaning()
    m.put("groups", ledger.fuel.get("groups"), "groups")
    m.put("items", ledger.fuel.get("items"), "names")
    return m


def growth_meaning(ledger: Ledger) -> Meaning:
    """The allowance per maturity in effect: defaults overlaid with [growth] (an absent table means the defaults)."""
    m = Meaning()
    for category, fraction in growth_table(ledger).items():
        m.put(category, fraction, "fraction")
    return m


def _unique(label: str, taken: dict) -> str:
    k, out = 2, label
    while any(key.startswith(out + ".") for key in taken):
        out, k = f"{label} #{k}", k + 1
    return out


def weighing_meaning(ledger: Ledger) -> Meaning | None:
    """The weighing as read (core.control.weighing): points, readings and adjustments in SI."""
    if ledger.weighing is None:
        return None
    from steelyard.core.control.weighing import parse_weighing  # here: most ledgers have no weighing

    w = parse_weighing(ledger.weighing, ledger.units, ledger)
    m = Meaning()
    for k, name in enumerate(w.names):
        m.put(f"point.{name}.at", [float(v) for v in w.support_xyz[k]], "length")
        m.put(f"point.{name}.reading", float(w.readings[k]), "mass")
        m.put(f"point.{name}.tare", float(w.tares[k]), "mass")
    for what, entries in (("on_board", w.on_board), ("missing", w.missing)):
        for e in entries:
            label = _unique(f"{what}.{e.name}", m.values)
            m.put(f"{label}.mass", float(e.mass), "mass")
            m.put(f"{label}.at", [float(v) for v in e.at], "length")
            m.put(f"{label}.item", e.item)
    m.put("replaces", w.replaces)
    m.put("vertical_cg", w.vertical_cg, "length")
    for key in ("date", "note", "by"):
        m.put(key, ledger.weighing.get(key))
    return m


def user_meaning(ledger: Ledger) -> Meaning | None:
    if ledger.user is None:
        return None
    m = Meaning()
    for key, value in ledger.user.items():
        m.put(str(key), value)
    return m


def table_changes(a: Ledger, b: Ledger, *, loading: bool = True) -> TableChanges:
    """Every table beyond items, envelopes and loadouts, B against A.

    `loading`: also compare [fuel] and sequences (False when a side is a
    snapshot, which drops them: there is nothing left to load).
    """
    if a is b:
        return TableChanges()
    skipped = () if loading else ("fuel", "sequences")
    return TableChanges(
        limits=compare_named(limit_meanings(a), limit_meanings(b)),
        allocations=compare_named(allocation_meanings(a), allocation_meanings(b)),
        sequences=compare_named(sequence_meanings(a), sequence_meanings(b)) if loading else DefinitionChanges(),
        mac=compare_single(mac_meaning(a), mac_meaning(b)),
        fuel=compare_single(fuel_meaning(a), fuel_meaning(b)) if loading else None,
        growth=compare_single(growth_meaning(a), growth_meaning(b)),
        weighing=compare_single(weighing_meaning(a), weighing_meaning(b)),
        user=compare_single(user_meaning(a), user_meaning(b)),
        not_compared=skipped)


# --------------------------------------------------------------------------- item keys beyond v1


def _item_meaning(key: str, value: object, units: FileUnits) -> object:
    """An item key beyond v1 as SI where it holds quantities (growth, tolerance, cg_table); else as written."""
    try:
        if key == "growth":
            return float(value) if isinstance(value, (int, float)) else parse_quantity(value, "dimensionless")
        if key == "tolerance" and isinstance(value, Mapping):
            out = dict(value)
            mass = value.get("mass")
            if mass is not None and not (isinstance(mass, str) and mass.strip().endswith("%")):
                out["mass"] = to_si(mass, "mass", units.mass)
            cg = value.get("cg")
            if cg is not None:
                out["cg"] = [to_si(v, "length", units.length) for v in (cg if isinstance(cg, list) else [cg] * 3)]
            return out
        if key == "cg_table" and value is not None:
            return [[r[0], *(to_si(v, "length", units.length) for v in r[1:])] for r in value]
    except (SteelyardError, TypeError, ValueError, IndexError):
        pass
    return value


def item_extra_changes(ea: Mapping, eb: Mapping, ua: FileUnits, ub: FileUnits) -> dict[str, tuple[object, object]]:
    """Item keys beyond v1 that differ in meaning, reported as written (old, new)."""
    out = {}
    for k in sorted(set(ea) | set(eb)):
        x, y = ea.get(k), eb.get(k)
        if same(x, y) and ua == ub:
            continue
        if x is None or y is None or not same(_item_meaning(k, x, ua), _item_meaning(k, y, ub)):
            out[k] = (x, y)
    return out
