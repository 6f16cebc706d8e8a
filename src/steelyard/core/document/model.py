"""The ledger document: immutable items, loadouts, envelopes and every other table.

Every table and key the file format defines has a named field here; there is
no catch-all. The v1 contract's numbers (mass, CG, inertia, envelope points)
are SI (kg, m, kg·m², kg/m³). The tables added since (limits, MAC, fuel,
growth, allocations, weighing, sequences, change log, snapshot record, and
item keys such as `tolerance` or `cg_table`) are held as written — validated
by the reader, their meaning derived once by the module that owns the concept
(core.limits.rules, core.control.growth, ...) and cached on the immutable
ledger. Holding them as written is what makes every write a round trip: the
writer emits exactly what was read, so a save cannot drift from the file.

`user` (at the top level and in every item, loadout and envelope) is the
user's own data: never interpreted, always written back verbatim.

Per-item numbers are also kept as numpy columns (`ItemArrays`) built once per
ledger, so roll-ups, checks and diffs never loop over items in Python. Edits
make a new `Ledger`; the old one stays valid, which is what undo and diff need.
"""

from __future__ import annotations

from collections import deque
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field, fields, replace
from functools import cached_property
from itertools import repeat

import numpy as np

from steelyard.core.physics.inertia import rotate, tensor_from_six
from steelyard.core.physics.rotation import rotation_matrix

DIRECTIONS = ("fwd", "aft", "left", "right", "up", "down")
OPPOSITE = {"fwd": "aft", "aft": "fwd", "left": "right", "right": "left", "up": "down", "down": "up"}


@dataclass(frozen=True)
class Shape:
    """A solid whose own inertia follows from its dimensions (SI, by key)."""

    kind: str
    params: Mapping[str, float] = field(default_factory=dict)
    axis: str = "z"
    #: the file wrote `axis` (even the default z): a rewrite keeps it; not part of the meaning
    axis_written: bool = field(default=False, compare=False)

    def local_tensor(self, mass: float) -> np.ndarray:
        from steelyard.core.physics.shapes import shape_tensor  # shapes imports model-free helpers only

        return shape_tensor(self.kind, dict(self.params), self.axis, mass)


class _NoUnits(Mapping):
    """The one shared, immutable, empty `given_units`: a million items need not hold a million empty dicts."""

    __slots__ = ()

    def __getitem__(self, key):
        raise KeyError(key)

    def __iter__(self):
        return iter(())

    def __len__(self) -> int:
        return 0

    def __hash__(self) -> int:
        return 0

    def __repr__(self) -> str:
        return "{}"

    def __new__(cls):  # one shared object: calling the class (as unpickling does) gives it again
        global NO_UNITS
        try:
            return NO_UNITS
        except NameError:
            NO_UNITS = super().__new__(cls)
            return NO_UNITS

    def __reduce__(self):  # unpickles as the same shared object, through the class alone
        return (_NoUnits, ())


NO_UNITS = _NoUnits()


@dataclass(frozen=True, slots=True)
class Item:
    """One line of the ledger. `mass` is per unit; for a variable item, its full amount.

    Slotted: a ledger may hold a million of these, and a per-instance dict
    would double their memory.
    """

    id: str
    mass: float
    cg: tuple[float, float, float]
    name: str = ""
    group: str = ""
    quantity: int = 1
    inertia: tuple[float, float, float, float, float, float] | None = None
    shape: Shape | None = None
    rotate: tuple[tuple[str, float], ...] = ()
    variable: bool = False
    density: float | None = None
    #: field -> unit the user wrote that field in ("41.5 lb"), kept on save
    given_units: Mapping[str, str] = NO_UNITS
    # -- keys beyond the v1 contract, held as written (validated by the reader) --
    #: design maturity category (core.control.growth)
    maturity: str | None = None
    #: explicit growth allowance: a fraction or a "12 %" string (core.control.growth)
    growth: float | str | None = None
    #: { mass, cg, kind } (core.control.uncertainty)
    tolerance: Mapping[str, object] | None = None
    #: optional equipment a loadout may leave off (core.loading.loadout)
    removable: bool = False
    #: rows [fraction, x, y, z] of a tank's CG against fill (core.loading.tank)
    cg_table: tuple | None = None
    #: { capacity_kg, fill }: what a snapshot's fixed item carried (io.ledger.snapshot)
    loaded: Mapping[str, object] | None = None
    #: the user's own data, never interpreted, kept verbatim
    user: Mapping[str, object] | None = None
    #: full id of the assembly placement this item comes from (None: the file's own item).
    #: Placed items are read-only copies in the parent's frame; the writer never writes them.
    source: str | None = None

    @property
    def label(self) -> str:
        return self.name or self.id

    def own_tensor(self) -> np.ndarray:
        """Own inertia of one unit about its own CG, body axes (3, 3)."""
        if self.inertia is not None:
            t = tensor_from_six(np.asarray(self.inertia, dtype=float))
        elif self.shape is not None:
            t = self.shape.local_tensor(self.mass)
        else:
            return np.zeros((3, 3))
        if self.rotate:
            t = rotate(t, rotation_matrix(self.rotate))
        return t

    def evolve(self, **changes) -> "Item":
        return replace(self, **changes)


#: Item's fields in order, and a setter for each that bypasses the frozen check (slot descriptors)
ITEM_FIELDS = tuple(f.name for f in fields(Item))
_SETTERS = {name: getattr(Item, name).__set__ for name in ITEM_FIELDS}
_GETTERS = {name: getattr(Item, name).__get__ for name in ITEM_FIELDS}
_DEFAULTS = {f.name: f.default for f in fields(Item) if f.name not in ("id", "mass", "cg")}


def items_from_columns(n: int, columns: Mapping[str, Iterable], **same) -> list[Item]:
    """`n` plain Items at once: `columns` maps field -> one value per item, `same` field -> one value for all.

    Fields given in neither take their defaults. Skips the per-item keyword
    handling of `Item(...)`; the values are taken as given (the caller has
    checked them), as the constructor would.
    """
    out = list(map(object.__new__, repeat(Item, n)))
    for name, values in columns.items():
        deque(map(_SETTERS[name], out, values), maxlen=0)  # the loop runs in C
    for name, v in {**_DEFAULTS, **same}.items():
        if name not in columns:
            deque(map(_SETTERS[name], out, repeat(v, n)), maxlen=0)
    return out


def items_replaced(items: Sequence[Item], columns: Mapping[str, Iterable], **same) -> list[Item]:
    """Copies of `items` with some fields replaced: `columns` field -> one value per item, `same` field -> one
    value for all; the other fields are copied. Each loop runs in C (bulk use: placed assemblies)."""
    n = len(items)
    given = {**{k: repeat(v, n) for k, v in same.items()}, **columns}
    return items_from_columns(n, {name: given[name] if name in given else map(_GETTERS[name], items)
                                  for name in ITEM_FIELDS})


def pick(xs: Sequence, rows) -> list:
    """[xs[i] for i in rows] at C speed (`rows`: ints, or a numpy array of them)."""
    from operator import itemgetter

    rows = rows.tolist() if isinstance(rows, np.ndarray) else rows
    if len(rows) == 0:
        return []
    got = itemgetter(*rows)(xs)
    return list(got) if len(rows) > 1 else [got]


def rows_with(items: Sequence[Item], *names: str, unset: object = None,
              among: Sequence[int] | None = None) -> list[int]:
    """Rows whose Item gives any of the fields `names` (a value that is not `unset`), ascending: one C
    pass per field, so a check that concerns a few items of 100,000 loops over those few only.
    `among`: the rows that can (`more_rows`), ascending; only those are looked at."""
    from operator import attrgetter, is_not

    if among is not None:
        if not among:
            return []
        picked = pick(items, among)
        hit = np.zeros(len(among), dtype=bool)
        for name in names:
            hit |= np.fromiter(map(is_not, map(attrgetter(name), picked), repeat(unset)), bool, len(among))
        return np.asarray(among, dtype=np.intp)[hit].tolist()
    n = len(items)
    if n == 0:
        return []
    hit = np.zeros(n, dtype=bool)
    for name in names:
        hit |= np.fromiter(map(is_not, map(attrgetter(name), items), repeat(unset)), bool, n)
    return np.flatnonzero(hit).tolist()


def more_rows_of(items: Sequence[Item]) -> list[int]:
    """Rows of the items that give some key beyond v1 (ITEM_MORE), ascending: one comparison per item,
    in C (`removable` unset may be False or None)."""
    from operator import attrgetter, ne

    held = list(map(attrgetter(*ITEM_MORE), items))
    n = len(held)
    none = tuple(None for _ in ITEM_MORE)
    none_removable = tuple(False if k == "removable" else None for k in ITEM_MORE)
    if held.count(none) + held.count(none_removable) == n:  # no tuple equals both (None != False)
        return []
    some = (np.fromiter(map(ne, held, repeat(none)), bool, n)
            & np.fromiter(map(ne, held, repeat(none_removable)), bool, n))
    return np.flatnonzero(some).tolist()


def more_rows(ledger: "Ledger") -> list[int]:
    """`more_rows_of(ledger.items)`, kept with the ledger (immutable: an edit makes a new one, and
    `_carry_more_rows` follows a one-row edit). The checks of those keys loop over these rows only."""
    cached = ledger.__dict__.get("_more_rows")
    if cached is None:
        cached = ledger.__dict__["_more_rows"] = more_rows_of(ledger.items)
    return cached


def item_with(item: Item, **changes) -> Item:
    """A copy of `item` with some fields replaced, without `replace`'s per-call set-up (bulk use)."""
    new = object.__new__(Item)
    for name in ITEM_FIELDS:
        _SETTERS[name](new, changes[name] if name in changes else getattr(item, name))
    return new


@dataclass(frozen=True)
class Amount:
    """How much of a variable item a loadout carries."""

    kind: str  # "fraction" | "mass" | "volume"
    value: float  # fraction 0..1, kg, or m³
    given: str | None = None  # the text as written, for saving


@dataclass(frozen=True)
class Loadout:
    name: str
    set: Mapping[str, Amount] = field(default_factory=dict)
    base: str | None = None
    #: removable items left off / fitted again (ids, as written: a list or one string)
    off: object = None
    on: object = None
    #: ramp | takeoff | landing (core.loading.loadout)
    condition: str | None = None
    user: Mapping[str, object] | None = None


@dataclass(frozen=True)
class Envelope:
    """A CG envelope: polygon of (cg on `axis` [m], mass [kg]) vertices."""

    name: str
    axis: str
    points: tuple[tuple[float, float], ...]
    #: "%mac" when the CG numbers are %MAC (core.limits.rules); None: lengths
    units: str | None = None
    #: scope, as written: which conditions / loadouts / sequences it limits (None: all)
    conditions: object = None
    loadouts: object = None
    sequences: object = None
    user: Mapping[str, object] | None = None

    @property
    def array(self) -> np.ndarray:
        return np.asarray(self.points, dtype=float).reshape(-1, 2)


@dataclass(frozen=True)
class FileUnits:
    mass: str = "kg"
    length: str = "m"
    inertia: str = "kg*m**2"
    #: optional units of bare volume and density numbers
    volume: str | None = None
    density: str | None = None

    @property
    def density_unit(self) -> str:
        """Unit of a bare density number: the file's own, else mass per length cubed."""
        return self.density or f"({self.mass})/({self.length})**3"


@dataclass(frozen=True)
class Frame:
    x: str = "aft"
    y: str = "right"
    z: str = "up"

    def direction(self, axis: int) -> str:
        return (self.x, self.y, self.z)[axis]


def _dense_own(n: int, rows: np.ndarray, values: np.ndarray) -> np.ndarray:
    out = np.zeros((n, 3, 3))
    if len(rows):
        out[rows] = values
    return out


def sparse_own(own: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """(rows, tensors) of the non-zero rows of a dense (n, 3, 3) own-inertia column."""
    rows = np.flatnonzero(np.any(own.reshape(-1, 9) != 0, axis=1))
    return rows, own[rows]


@dataclass(frozen=True)
class ItemArrays:
    """Per-item columns, SI. Own inertia is per unit, body axes.

    Own inertia is kept sparse where it can be (`own_rows`, ascending, and
    their tensors `own_values`): in a big ledger most items have none, and a
    dense (n, 3, 3) column is 72 MB a million rows. `own` gives the dense
    column all the same (made on first use and kept); columns built dense
    (`dense_own`, e.g. placed items) stay dense.
    """

    unit_mass: np.ndarray  # (n,)
    quantity: np.ndarray  # (n,) float
    cg: np.ndarray  # (n, 3), column-major: the roll-up reads it as (3, n)
    dense_own: np.ndarray | None  # (n, 3, 3), or None: sparse only
    variable: np.ndarray  # (n,) bool
    own_rows: np.ndarray | None = None  # (k,) rows with an own inertia, ascending
    own_values: np.ndarray | None = None  # (k, 3, 3)

    @classmethod
    def sparse(cls, unit_mass, quantity, cg, variable, own_rows, own_values) -> "ItemArrays":
        return cls(unit_mass, quantity, cg, None, variable, np.asarray(own_rows, dtype=np.intp),
                   np.asarray(own_values, dtype=float).reshape(-1, 3, 3))

    @property
    def own(self) -> np.ndarray:
        """(n, 3, 3) dense own inertia (zeros where an item has none)."""
        if self.dense_own is not None:
            return self.dense_own
        dense = self.__dict__.get("_own")
        if dense is None:
            dense = _dense_own(len(self.unit_mass), self.own_rows, self.own_values)
            object.__setattr__(self, "_own", dense)
        return dense

    def own_sparse(self) -> tuple[np.ndarray, np.ndarray]:
        """(rows, tensors) of the items with an own inertia: what a roll-up adds up."""
        if self.own_rows is not None:
            return self.own_rows, self.own_values
        got = self.__dict__.get("_sparse")
        if got is None:
            got = sparse_own(self.dense_own)
            object.__setattr__(self, "_sparse", got)
        return got

    @classmethod
    def from_items(cls, items: Sequence[Item]) -> "ItemArrays":
        n = len(items)
        unit_mass = np.fromiter((it.mass for it in items), float, n)
        quantity = np.fromiter((it.quantity for it in items), float, n)
        cg = np.asfortranarray(np.array([it.cg for it in items], dtype=float).reshape(n, 3))
        variable = np.fromiter((it.variable for it in items), bool, n)
        rows = [i for i, it in enumerate(items) if it.inertia is not None or it.shape is not None]
        values = np.array([items[i].own_tensor() for i in rows], dtype=float).reshape(-1, 3, 3)
        return cls.sparse(unit_mass, quantity, cg, variable, rows, values)

    def with_row(self, i: int, item: Item) -> "ItemArrays":
        """A copy with row i replaced: cheap enough for an edit on 100k items."""
        unit_mass, quantity, cg, variable = (self.unit_mass.copy(), self.quantity.copy(), self.cg.copy(order="F"),
                                             self.variable.copy())
        unit_mass[i] = item.mass
        quantity[i] = item.quantity
        cg[i] = item.cg
        variable[i] = item.variable
        t = item.own_tensor()
        if self.dense_own is not None:
            own = self.dense_own.copy()
            own[i] = t
            return ItemArrays(unit_mass, quantity, cg, own, variable)
        rows, values = self.own_rows, self.own_values
        k = int(np.searchsorted(rows, i))
        present = k < len(rows) and rows[k] == i
        if present and np.any(t != 0):
            values = values.copy()
            values[k] = t
        elif present:
            rows, values = np.delete(rows, k), np.delete(values, k, axis=0)
        elif np.any(t != 0):
            rows, values = np.insert(rows, k, i), np.insert(values, k, t, axis=0)
        return ItemArrays.sparse(unit_mass, quantity, cg, variable, rows, values)


@dataclass(frozen=True)
class Ledger:
    items: tuple[Item, ...] = ()
    units: FileUnits = field(default_factory=FileUnits)
    frame: Frame = field(default_factory=Frame)
    loadouts: tuple[Loadout, ...] = ()
    envelopes: tuple[Envelope, ...] = ()
    # -- tables beyond the v1 contract, held as written (validated by the reader) --
    limits: tuple[Mapping[str, object], ...] = ()  # [[limit]] (core.limits.rules)
    mac: Mapping[str, object] | None = None  # [mac] (core.limits.rules)
    fuel: Mapping[str, object] | None = None  # [fuel] (core.limits.rules)
    growth: Mapping[str, object] | None = None  # [growth] (core.control.growth)
    allocations: tuple[Mapping[str, object], ...] = ()  # [[allocation]] (core.control.growth)
    weighing: Mapping[str, object] | None = None  # [weighing] (core.control.weighing)
    sequences: tuple[Mapping[str, object], ...] = ()  # [[sequence]] (core.loading.sequence)
    changes: tuple[Mapping[str, object], ...] = ()  # [[change]] (core.history.changes)
    snapshot: Mapping[str, object] | None = None  # [snapshot] (io.ledger.snapshot)
    #: [user]: the user's own data, never interpreted, kept verbatim
    user: Mapping[str, object] | None = None
    assemblies: tuple[Mapping[str, object], ...] = ()  # [[assembly]] as written (core.assembly)
    #: resolved placements (core.assembly.flatten.Placed), nested ones included; never written
    placed: tuple = ()

    @cached_property
    def arrays(self) -> ItemArrays:
        return ItemArrays.from_items(self.items)

    @cached_property
    def index(self) -> dict[str, int]:
        return {it.id: i for i, it in enumerate(self.items)}

    def item(self, item_id: str) -> Item:
        return self.items[self.index[item_id]]

    def loadout(self, name: str) -> Loadout:
        for lo in self.loadouts:
            if lo.name == name:
                return lo
        raise KeyError(name)

    def evolve(self, **changes) -> "Ledger":
        """A new ledger with some fields replaced (cached columns rebuilt lazily)."""
        return replace(self, **changes)

    def with_item(self, item: Item) -> "Ledger":
        """Replace the item with the same id, or append it; columns updated in place of a rebuild."""
        i = self.index.get(item.id)
        if i is not None and self.items[i].source is not None:
            _placed_refusal(self.items[i])
        if i is None:
            return self.evolve(items=self.items + (item,))
        items = self.items[:i] + (item,) + self.items[i + 1:]
        new = self.evolve(items=items)
        if "arrays" in self.__dict__:
            new.__dict__["arrays"] = self.arrays.with_row(i, item)
        new.__dict__["index"] = self.index
        for carry in ROW_CACHES:  # per-row caches follow the edit instead of a full rescan
            carry(self, new, i)
        return new

    def without_item(self, item_id: str) -> "Ledger":
        i = self.index[item_id]
        if self.items[i].source is not None:
            _placed_refusal(self.items[i])
        return self.evolve(items=self.items[:i] + self.items[i + 1:])

    @property
    def own_items(self) -> tuple[Item, ...]:
        """The items this file itself holds (placed items left out)."""
        if not self.placed:
            return self.items
        return tuple(it for it in self.items if it.source is None)


def _placed_refusal(item: Item) -> None:
    """An item placed from an assembly is never edited in the parent: no writer would keep the edit."""
    from steelyard.core.errors import SteelyardError

    raise SteelyardError(f"comes from assembly {item.source!r}: edit it in that assembly's own file",
                         subject=f"item {item.id!r}")


def document_of(ledger: Ledger) -> Ledger:
    """The file as written: own items and the [[assembly]] table, no placed items.

    What every writer writes; the same object when nothing is placed.
    """
    if not ledger.placed:
        return ledger
    return replace(ledger, items=ledger.own_items, placed=())


#: keys beyond v1 of each table, as written: what diffs compare and displays list by name
ITEM_MORE = ("cg_table", "growth", "loaded", "maturity", "removable", "tolerance", "user")
LOADOUT_MORE = ("condition", "off", "on", "user")
ENVELOPE_MORE = ("conditions", "loadouts", "sequences", "units", "user")


def more_keys(entry: Item | Loadout | Envelope) -> dict[str, object]:
    """The keys beyond v1 that `entry` gives (not None, not a false `removable`), by file name."""
    names = ITEM_MORE if isinstance(entry, Item) else LOADOUT_MORE if isinstance(entry, Loadout) else ENVELOPE_MORE
    out = {}
    for k in names:
        v = getattr(entry, k)
        if v is not None and v is not False:
            out[k] = v
    return out


#: hooks(old, new, row) that carry a derived per-row cache from a ledger to its
#: one-row edit; modules that keep such caches (core.tank) register here
ROW_CACHES: list = []


def with_arrays(ledger: Ledger, arrays: ItemArrays) -> Ledger:
    """Attach columns built elsewhere (the loader builds them in bulk)."""
    ledger.__dict__["arrays"] = arrays
    return ledger


def _carry_more_rows(old: Ledger, new: Ledger, row: int) -> None:
    """After a one-row edit: `more_rows` of the old ledger with that row looked at again."""
    cached = old.__dict__.get("_more_rows")
    if cached is None:
        return
    from bisect import insort

    rows = [r for r in cached if r != row]
    if more_rows_of(new.items[row:row + 1]):
        insort(rows, row)
    new.__dict__["_more_rows"] = rows


ROW_CACHES.append(_carry_more_rows)
