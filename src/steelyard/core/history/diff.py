"""Comparing two configurations item by item, and what the changes do to the totals.

A *side* is a ledger with a loadout (or none), or a snapshot, which is one
configuration already. Both sides are compared *as carried*: every row's
mass per unit and own inertia are what that side has on board, so two
loadouts of one file, a ledger and last month's snapshot of it, or two
versions of a file all compare the same way. A load item also keeps its
full amount (`capacity_kg`), so a bigger tank shows even when it is empty.

Items match by id. Values are SI floats; two numbers are equal when they
differ by at most `ULPS` units in the last place of the larger one, so a
length typed "12 in" in one file and "1 ft" in the other (a one-ulp
difference after conversion) is no change. Everything per item runs over
numpy columns; only rows that differ are turned into Python dicts.

Definitions beside the items (envelopes, loadouts, limits, allocations,
sequences, [mac], [fuel], [growth], [weighing], [user]) are compared by
core.history.diff_tables; core.history.diff_text puts any change in words.
"""

from __future__ import annotations

import operator
from collections.abc import Mapping
from dataclasses import dataclass, field
from functools import cached_property
from itertools import repeat

import numpy as np

from steelyard.core.errors import SteelyardError, item_subject
from steelyard.core.history.diff_assembly import PlacementChange, file_of, placement_changes
from steelyard.core.history.diff_equal import ULPS, close, same
from steelyard.core.history.diff_tables import (DefinitionChanges, TableChanges, envelope_definitions,
                                                item_extra_changes, loadout_definitions, table_changes)
from steelyard.core.history.diff_text import change_rows
from steelyard.core.physics.inertia import COMPONENTS
from steelyard.core.loading.loadout import fill_fractions, state_from_fill
from steelyard.core.document.model import ITEM_MORE, Ledger, more_rows, pick as _pick, rows_with
from steelyard.core.physics.rollup import MassProperties, check_finite_rollup, rollup_state
from steelyard.core.limits.status import EnvelopeResult, envelope_results


# ULPS, close, change_rows and DefinitionChanges stay importable from here: screens and reports use them.
RE_EXPORTED = (ULPS, close, change_rows, DefinitionChanges)
#: The top-level table that makes a ledger a snapshot (see steelyard.io.ledger.snapshot).
SNAPSHOT_TABLE = "snapshot"
#: Per-item key in a snapshot for a load item: { capacity_kg = full amount, fill = 0..1 }.
LOADED_KEY = "loaded"

#: Item fields in the order they are reported.
FIELDS = ("name", "group", "quantity", "mass_kg", "cg_m", "inertia_kg_m2", "shape", "rotate",
          "variable", "capacity_kg", "density_kg_m3")


# --------------------------------------------------------------------------- one side, as carried


@dataclass(frozen=True, eq=False)
class Part:
    """The per-item values of some rows of a side (`Carried.part`), read from their Items."""

    rows: np.ndarray  # (k,) rows of the side
    items: list
    labels: list[str]
    groups: list[str]
    six: np.ndarray  # (k, 6) carried own inertia per unit as given, NaN where none is given
    density: np.ndarray  # (k,) NaN where none
    extras: list[Mapping[str, object]]  # unknown item keys, the snapshot marker taken out
    geometry: np.ndarray  # (k,) bool: the item has a shape or turns (compared in Python)
    has_extra: np.ndarray  # (k,) bool: extras[i] is not empty


@dataclass(frozen=True, eq=False)
class Carried:
    """One side as carried (SI), in the ledger's own item order.

    The columns from the ledger's arrays (mass, CG, the totals) are made at once, and
    so is every check. The values read item by item from the Items (names, groups,
    inertia and density as given, keys beyond v1) are made when first asked: for
    some rows (`part`), or whole (`labels`, `six`...). A diff of two versions that
    share most Item objects (io.ledger.read_reuse) then reads only the rows it
    compares."""

    ledger: Ledger
    loadout: str | None
    quantity: np.ndarray  # (n,) float
    mass: np.ndarray  # (n,) carried mass per unit
    cg: np.ndarray  # (n, 3)
    variable: np.ndarray  # (n,) bool: a load item (in a snapshot: was one)
    capacity: np.ndarray  # (n,) full amount of a load item (mass × quantity), NaN for fixed
    mp: MassProperties
    row_mass: np.ndarray  # (n,) total carried mass of each row
    fill: np.ndarray  # (n,) the loadout's fill of each row (1 for a fixed item)
    cg_rows: np.ndarray | None = None  # (n, 3) each row's CG as loaded (a tank's CG table applied)

    @property
    def is_snapshot(self) -> bool:
        return is_snapshot(self.ledger)

    @cached_property
    def ids(self) -> list[str]:
        return list(map(operator.attrgetter("id"), self.ledger.items))

    def part(self, rows: np.ndarray) -> Part:
        """The per-item values of `rows` (in the order given)."""
        rows = np.asarray(rows, dtype=np.intp)
        items = _pick(self.ledger.items, rows.tolist())
        k = len(items)
        six = np.full((k, 6), np.nan)
        at = [i for i, it in enumerate(items) if it.inertia is not None]
        if at:
            r = np.array(at)
            six[r] = np.array([items[i].inertia for i in at], dtype=float) * self.fill[rows[r], None]
        density = np.full(k, np.nan)
        at = [i for i, it in enumerate(items) if it.density is not None]
        if at:
            density[np.array(at)] = [items[i].density for i in at]
        labels = [name or i for name, i in zip(map(operator.attrgetter("name"), items),
                                                map(operator.attrgetter("id"), items))]
        extras = _item_extras(items)
        if self.is_snapshot:
            for i in [i for i, ex in enumerate(extras) if LOADED_KEY in ex]:
                extras[i] = {key: v for key, v in extras[i].items() if key != LOADED_KEY}
        geometry = _given(items, "shape") | _given(items, "rotate", falsy=True)
        return Part(rows, items, labels, list(map(operator.attrgetter("group"), items)), six, density, extras,
                    geometry, np.fromiter(map(bool, extras), bool, k))

    @cached_property
    def whole(self) -> Part:
        return self.part(np.arange(len(self.ledger.items)))

    # the whole columns, for readers that index rows freely (renderers)
    labels = property(lambda self: self.whole.labels)
    groups = property(lambda self: self.whole.groups)
    six = property(lambda self: self.whole.six)
    density = property(lambda self: self.whole.density)
    extras = property(lambda self: self.whole.extras)
    geometry = property(lambda self: self.whole.geometry)
    has_extra = property(lambda self: self.whole.has_extra)


def is_snapshot(ledger: Ledger) -> bool:
    return ledger.snapshot is not None


def _loaded_marker(item_id: str, raw: object) -> tuple[float, float]:
    ok = isinstance(raw, Mapping) and all(
        type(raw.get(k)) in (int, float) and np.isfinite(raw.get(k)) for k in ("capacity_kg", "fill"))
    if not ok:
        raise SteelyardError("must be { capacity_kg = <full amount, kg>, fill = <0..1> }",
                             subject=item_subject(item_id), field=LOADED_KEY)
    return float(raw["capacity_kg"]), float(raw["fill"])


def _markers(ledger: Ledger, capacity: np.ndarray, variable: np.ndarray) -> None:
    """A snapshot's load items, from their markers: capacity and `variable` set in place.

    Every marker is checked: in bulk when each is a table of two finite numbers, else one at a
    time, so the first bad one is named as `_loaded_marker` words it. Only the rows giving keys
    beyond v1 (`more_rows`, known from the reading) can hold one."""
    items = ledger.items
    rows = rows_with(items, LOADED_KEY, among=more_rows(ledger))
    marks = list(map(operator.attrgetter(LOADED_KEY), _pick(items, rows)))
    if {dict}.issuperset(map(type, marks)):
        caps = list(map(dict.get, marks, repeat("capacity_kg")))
        fills = list(map(dict.get, marks, repeat("fill")))
        if {float, int}.issuperset(map(type, caps)) and {float, int}.issuperset(map(type, fills)):
            try:
                c, f = np.array(caps, dtype=float), np.array(fills, dtype=float)
            except OverflowError:  # an integer beyond a float: the loop below names it
                c = f = np.array([np.inf])
            if np.isfinite(c).all() and np.isfinite(f).all():
                capacity[rows] = c
                variable[rows] = True
                return
    for i, m in zip(rows, marks):
        if m is False:
            continue
        capacity[i], _ = _loaded_marker(items[i].id, m)
        variable[i] = True


def _given(items, key: str, *, falsy: bool = False) -> np.ndarray:
    """Per item: the field is not None (`falsy`: is truthy), one C pass over the attribute."""
    vals = list(map(operator.attrgetter(key), items))
    if falsy:
        return np.fromiter(map(bool, vals), bool, len(vals))
    return np.fromiter(map(operator.is_not, vals, repeat(None)), bool, len(vals))


def _item_extras(items) -> list[dict[str, object]]:
    """`more_keys(item)` of every item, built key by key (most items give none)."""
    extras: list[dict[str, object]] = [{} for _ in range(len(items))]
    for k in ITEM_MORE:
        vals = list(map(operator.attrgetter(k), items))
        for i, v in enumerate(vals):
            if v is not None and v is not False:
                extras[i][k] = v
    return extras


def carried(ledger: Ledger, loadout: str | None = None) -> Carried:
    """One side as carried under `loadout` (None: load items empty; a snapshot has none)."""
    items = ledger.items
    a = ledger.arrays
    fill = fill_fractions(ledger, loadout)
    state = state_from_fill(ledger, fill, loadout)
    variable = a.variable.copy()
    capacity = np.where(variable, a.unit_mass * a.quantity, np.nan)
    if is_snapshot(ledger):  # every marker is checked here, whichever rows are compared later
        _markers(ledger, capacity, variable)
    mp = rollup_state(state)
    check_finite_rollup(mp, items)  # a side beyond a float is refused naming the item, before any arithmetic
    return Carried(ledger, loadout, a.quantity, a.unit_mass * fill, a.cg, variable, capacity, mp, state.mass,
                   fill, state.cg)


# --------------------------------------------------------------------------- results


@dataclass(frozen=True)
class ItemChange:
    """A matched item whose fields differ: field -> (old, new), SI, in FIELDS order then the keys beyond v1"""

    id: str
    fields: Mapping[str, tuple[object, object]]
    #: the file the item comes from when it is placed from an assembly (None: the compared file's own)
    file: str | None = None


@dataclass(frozen=True)
class ItemEffect:
    """How far one item's change alone moves A's CG (B's value put into A, nothing else)."""

    id: str
    kind: str  # "added" | "removed" | "changed"
    mass_delta: float  # kg carried, B − A
    cg_shift: np.ndarray  # (3,) m; NaN when A (or A after the change) has no mass

    @property
    def shift(self) -> float:
        return float(np.sqrt(self.cg_shift @ self.cg_shift))


@dataclass(frozen=True)
class EnvelopeChange:
    name: str
    a: EnvelopeResult | None  # None: the envelope is not in A
    b: EnvelopeResult | None

    @property
    def margin_delta(self) -> float | None:
        if self.a is None or self.b is None or self.a.margin is None or self.b.margin is None:
            return None
        return self.b.margin - self.a.margin

    @property
    def status_changed(self) -> bool:
        return (self.a is None) != (self.b is None) or (
            self.a is not None and self.b is not None and self.a.inside != self.b.inside)


@dataclass(frozen=True, eq=False)
class LedgerDiff:
    a: Carried
    b: Carried
    added: tuple[str, ...]  # in B's order
    removed: tuple[str, ...]  # in A's order
    changed: tuple[ItemChange, ...]  # in A's order
    ranked: tuple[ItemEffect, ...]  # every added, removed and changed item, largest |ΔCG| first
    envelopes: tuple[EnvelopeChange, ...]
    frame: Mapping[str, tuple[str, str]] = field(default_factory=dict)
    envelope_definitions: DefinitionChanges = DefinitionChanges()
    loadout_definitions: DefinitionChanges | None = None  # None: not compared
    tables: TableChanges = TableChanges()  # limits, allocations, sequences, [mac], [fuel], [growth], ...
    placements: tuple[PlacementChange, ...] = ()  # assemblies placed, moved or removed

    def file_of(self, item_id: str) -> str | None:
        """The file an added, removed or changed item comes from (None: the compared file's own item)."""
        return file_of(self.b.ledger, item_id) or file_of(self.a.ledger, item_id)

    @property
    def identical(self) -> bool:
        return not (self.added or self.removed or self.changed or self.frame or self.envelope_definitions
                    or self.loadout_definitions or self.tables or self.placements)

    @property
    def delta_mass(self) -> float:
        return self.b.mp.mass - self.a.mp.mass

    @property
    def delta_cg(self) -> np.ndarray:
        return self.b.mp.cg - self.a.mp.cg

    @property
    def delta_inertia(self) -> np.ndarray:
        return self.b.mp.inertia_cg - self.a.mp.inertia_cg

    @cached_property
    def delta_principal(self) -> np.ndarray | None:
        if self.a.mp.mass <= 0 or self.b.mp.mass <= 0:
            return None
        return self.b.mp.principal_moments - self.a.mp.principal_moments


# --------------------------------------------------------------------------- field values


def _num(x: float) -> float | None:
    x = float(x)
    return x if np.isfinite(x) else None


def _six(row: np.ndarray) -> dict | None:
    return None if np.isnan(row).all() else {k: float(v) for k, v in zip(COMPONENTS, row)}


def _shape(item) -> dict | None:
    s = item.shape
    if s is None:
        return None
    out: dict = {"kind": s.kind, "axis": s.axis}
    for k, v in s.params.items():
        out[k] = [float(x) for x in v] if isinstance(v, tuple) else float(v)
    return out


def _rotate(item) -> list:
    return [[axis, float(deg)] for axis, deg in item.rotate]


_VALUES = {  # (side, its part, position in the part, row) -> the field as reported
    "name": lambda s, p, k, i: p.labels[k],
    "group": lambda s, p, k, i: p.groups[k],
    "quantity": lambda s, p, k, i: int(s.quantity[i]),
    "mass_kg": lambda s, p, k, i: float(s.mass[i]),
    "cg_m": lambda s, p, k, i: [float(x) for x in s.cg[i]],
    "inertia_kg_m2": lambda s, p, k, i: _six(p.six[k]),
    "shape": lambda s, p, k, i: _shape(p.items[k]),
    "rotate": lambda s, p, k, i: _rotate(p.items[k]),
    "variable": lambda s, p, k, i: bool(s.variable[i]),
    "capacity_kg": lambda s, p, k, i: _num(s.capacity[i]),
    "density_kg_m3": lambda s, p, k, i: _num(p.density[k]),
}


# --------------------------------------------------------------------------- comparing


def _strings_differ(xs: list[str], ys: list[str]) -> np.ndarray:
    return np.fromiter(map(operator.ne, xs, ys), bool, len(xs))


def _item_masks(a: Carried, b: Carried, pa: Part, pb: Part) -> dict[str, np.ndarray]:
    """field -> (k,) bool 'differs' over the pairs (A row pa.rows[k], B row pb.rows[k])."""
    ia, ib = pa.rows, pb.rows
    m = {
        "name": _strings_differ(pa.labels, pb.labels),
        "group": _strings_differ(pa.groups, pb.groups),
        "quantity": a.quantity[ia] != b.quantity[ib],
        "mass_kg": ~close(a.mass[ia], b.mass[ib]),
        "cg_m": ~close(a.cg[ia], b.cg[ib]).all(axis=1),
        "inertia_kg_m2": ~close(pa.six, pb.six).all(axis=1),
        "variable": a.variable[ia] != b.variable[ib],
        "capacity_kg": ~close(a.capacity[ia], b.capacity[ib]),
        "density_kg_m3": ~close(pa.density, pb.density),
    }
    shape = np.zeros(len(ia), bool)
    rotate = np.zeros(len(ia), bool)
    for k in np.flatnonzero(pa.geometry | pb.geometry).tolist():
        x, y = pa.items[k], pb.items[k]
        if x.shape is not None or y.shape is not None:
            shape[k] = not same(_shape(x), _shape(y))
        if x.rotate or y.rotate:
            rotate[k] = not same(_rotate(x), _rotate(y))
    m["shape"], m["rotate"] = shape, rotate
    return m


def _maybe_changed(a: Carried, b: Carried, ia: np.ndarray, ib: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The matched pairs left to compare field by field. A pair that holds the very same Item object
    (two versions read through one io.ledger.read_reuse memory) under the same fill, load-item state
    and [units] has equal fields: each compared value is the Item's own, or its row times the fill."""
    if not len(ia) or a.ledger.units != b.ledger.units:
        return ia, ib
    same = np.fromiter(map(operator.is_, _pick(a.ledger.items, ia.tolist()), _pick(b.ledger.items, ib.tolist())),
                       bool, len(ia))
    if not same.any():
        return ia, ib
    same &= (a.fill[ia] == b.fill[ib]) & (a.variable[ia] == b.variable[ib]) & _same_nan(a.capacity[ia],
                                                                                         b.capacity[ib])
    keep = np.flatnonzero(~same)
    return ia[keep], ib[keep]


def _same_nan(x: np.ndarray, y: np.ndarray) -> np.ndarray:
    return (x == y) | (np.isnan(x) & np.isnan(y))


def _rank(a: Carried, b: Carried, kinds: list[str], ids: list[str], ra: np.ndarray,
          rb: np.ndarray) -> tuple[ItemEffect, ...]:
    """Closed form: ΔCG_i = (m_b (r_b − c) − m_a (r_a − c)) / (M + m_b − m_a), c and M of A.

    ra, rb: rows in A and B (−1 where absent). One vectorised pass, no roll-up per item.
    """
    k = len(ids)
    if k == 0:
        return ()
    has_a, has_b = ra >= 0, rb >= 0
    m_a = np.where(has_a, a.row_mass[np.maximum(ra, 0)] if len(a.mass) else 0.0, 0.0)
    m_b = np.where(has_b, b.row_mass[np.maximum(rb, 0)] if len(b.mass) else 0.0, 0.0)
    r_a = a.cg[np.maximum(ra, 0)] if len(a.mass) else np.zeros((k, 3))
    r_b = b.cg[np.maximum(rb, 0)] if len(b.mass) else np.zeros((k, 3))
    c, big_m = a.mp.cg, a.mp.mass
    new_m = big_m + m_b - m_a
    with np.errstate(invalid="ignore", divide="ignore"):
        moment = (m_b[:, None] * np.where(has_b[:, None], r_b - c, 0.0)
                  - m_a[:, None] * np.where(has_a[:, None], r_a - c, 0.0))
        shift = moment / new_m[:, None]
    undefined = ~(new_m > 0) if big_m > 0 else np.ones(k, bool)
    shift[undefined] = np.nan
    norm = np.sqrt((shift * shift).sum(axis=1))
    key = np.where(np.isnan(norm), -1.0, norm)
    order = np.argsort(-key, kind="stable")
    dm = m_b - m_a
    return tuple(ItemEffect(ids[i], kinds[i], float(dm[i]), shift[i]) for i in order.tolist())


def _envelope_changes(a: Carried, b: Carried) -> tuple[EnvelopeChange, ...]:
    ra = {r.name: r for r in envelope_results(a.ledger, a.mp)}
    rb = {r.name: r for r in envelope_results(b.ledger, b.mp)}
    names = list(ra) + [n for n in rb if n not in ra]
    return tuple(EnvelopeChange(n, ra.get(n), rb.get(n)) for n in names)


def _match(a: Carried, b: Carried, shared: tuple[np.ndarray, np.ndarray] | None
           ) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """(B row of each A row, A row of each B row; −1 where none) and the matched pairs (A rows, B rows)
    left to compare field by field.

    `shared` (A rows, B rows) names pairs that should hold the very same Item object (io.ledger.read_reuse
    knows them); each is checked, and only the other rows are matched by id."""
    na, nb = len(a.ledger.items), len(b.ledger.items)
    ib_all = np.full(na, -1, dtype=np.int64)
    ia_all = np.full(nb, -1, dtype=np.int64)
    if shared is not None and len(shared[0]) and a.ledger.units == b.ledger.units:
        sa, sb = (np.asarray(x, dtype=np.int64) for x in shared)
        ok = (sa >= 0) & (sa < na) & (sb >= 0) & (sb < nb)
        sa, sb = sa[ok], sb[ok]
        same = np.fromiter(map(operator.is_, _pick(a.ledger.items, sa.tolist()), _pick(b.ledger.items, sb.tolist())),
                           bool, len(sa))
        sa, sb = sa[same], sb[same]
        ib_all[sa] = sb
        ia_all[sb] = sa
        rest_a = np.flatnonzero(ib_all < 0)
        rest_b = np.flatnonzero(ia_all < 0)
        a_ids = [it.id for it in _pick(a.ledger.items, rest_a.tolist())]
        b_ids = [it.id for it in _pick(b.ledger.items, rest_b.tolist())]
        ib_all[rest_a] = np.fromiter(map(b.ledger.index.get, a_ids, repeat(-1)), np.int64, len(a_ids))
        ia_all[rest_b] = np.fromiter(map(a.ledger.index.get, b_ids, repeat(-1)), np.int64, len(b_ids))
        settled = np.zeros(na, bool)
        settled[sa] = (a.fill[sa] == b.fill[sb]) & (a.variable[sa] == b.variable[sb]) & _same_nan(
            a.capacity[sa], b.capacity[sb])
        matched = np.flatnonzero((ib_all >= 0) & ~settled)
        return ib_all, ia_all, matched, ib_all[matched]
    if a.ids == b.ids:  # same items in the same order (two loadouts, a snapshot of this ledger)
        ib_all = ia_all = np.arange(na, dtype=np.int64)
    else:
        ib_all = np.fromiter(map(b.ledger.index.get, a.ids, repeat(-1)), np.int64, na)
        ia_all = np.fromiter(map(a.ledger.index.get, b.ids, repeat(-1)), np.int64, nb)
    matched = np.flatnonzero(ib_all >= 0)
    ia, ib = _maybe_changed(a, b, matched, ib_all[matched])
    return ib_all, ia_all, ia, ib


def compare_carried(a: Carried, b: Carried, *, loadouts: bool | None = None,
                    shared: tuple[np.ndarray, np.ndarray] | None = None) -> LedgerDiff:
    """The diff of two sides already as carried.

    `loadouts`: also compare loadout definitions; by default only when both
    sides are whole ledgers with no loadout chosen (two versions of a file).
    `shared`: (A rows, B rows) that may hold the same Item objects (see `_match`): a hint, checked.
    """
    b_index = b.ledger.index
    a_index = a.ledger.index
    ib_all, ia_all, ia, ib = _match(a, b, shared)
    pa, pb = a.part(ia), b.part(ib)
    masks = _item_masks(a, b, pa, pb)
    any_diff = np.zeros(len(ia), bool)
    for name in FIELDS:
        any_diff |= masks[name]
    extra_fields: dict[int, dict] = {}
    for k in np.flatnonzero(pa.has_extra | pb.has_extra).tolist():
        ch = item_extra_changes(pa.extras[k], pb.extras[k], a.ledger.units, b.ledger.units)
        if ch:
            extra_fields[k] = ch
            any_diff[k] = True
    changed = []
    for k in np.flatnonzero(any_diff).tolist():
        i, j = int(ia[k]), int(ib[k])
        fields = {name: (_VALUES[name](a, pa, k, i), _VALUES[name](b, pb, k, j)) for name in FIELDS
                  if masks[name][k]}
        fields.update(extra_fields.get(k, {}))
        changed.append(ItemChange(a.ledger.items[i].id, fields))
    placements: list[PlacementChange] = []
    if a.ledger.placed or b.ledger.placed:
        placements, folded = placement_changes(a.ledger, a.row_mass, a.cg_rows, a.mp.mass, a.mp.cg, b.ledger,
                                               b.row_mass, b.cg_rows, {c.id for c in changed})
        changed = [ItemChange(c.id, c.fields, file_of(b.ledger, c.id) or file_of(a.ledger, c.id))
                   for c in changed if c.id not in folded]
    elif a.is_snapshot or b.is_snapshot:
        changed = [ItemChange(c.id, c.fields, file_of(b.ledger, c.id) or file_of(a.ledger, c.id)) for c in changed]
    removed_rows = np.flatnonzero(ib_all < 0)
    added_rows = np.flatnonzero(ia_all < 0)
    removed = tuple(it.id for it in _pick(a.ledger.items, removed_rows.tolist()))
    added = tuple(it.id for it in _pick(b.ledger.items, added_rows.tolist()))

    ch_a = np.array([a_index[c.id] for c in changed], dtype=np.int64)
    ch_b = np.array([b_index[c.id] for c in changed], dtype=np.int64)
    ra = np.concatenate([ch_a, removed_rows, np.full(len(added_rows), -1)]).astype(np.int64)
    rb = np.concatenate([ch_b, np.full(len(removed_rows), -1), added_rows]).astype(np.int64)
    kinds = ["changed"] * len(changed) + ["removed"] * len(removed) + ["added"] * len(added)
    ranked = _rank(a, b, kinds, [c.id for c in changed] + list(removed) + list(added), ra, rb)

    fa, fb = a.ledger.frame, b.ledger.frame
    frame = {k: (getattr(fa, k), getattr(fb, k)) for k in ("x", "y", "z") if getattr(fa, k) != getattr(fb, k)}
    if loadouts is None:
        loadouts = (a.loadout is None and b.loadout is None and not a.is_snapshot and not b.is_snapshot)
    return LedgerDiff(a, b, added, removed, tuple(changed), ranked, _envelope_changes(a, b), frame,
                      envelope_definitions(a.ledger, b.ledger),
                      loadout_definitions(a.ledger, b.ledger) if loadouts else None,
                      table_changes(a.ledger, b.ledger, loading=not (a.is_snapshot or b.is_snapshot)),
                      tuple(placements))


def compare(a: Ledger, a_loadout: str | None, b: Ledger, b_loadout: str | None, *,
            loadouts: bool | None = None) -> LedgerDiff:
    """Diff of ledger `a` under `a_loadout` against `b` under `b_loadout` (None: load items empty)."""
    return compare_carried(carried(a, a_loadout), carried(b, b_loadout), loadouts=loadouts)
