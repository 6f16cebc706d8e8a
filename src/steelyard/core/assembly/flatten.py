"""Place a child ledger's items into the parent's frame: the flat ledger every command works on.

Each placed item is a read-only copy with the full id `<assembly id>/<item
id>`, its CG at `at + T·cg`, its own inertia T·I·Tᵀ written out as the six
components (shape and `rotate` are already in I), its group nested under the
placement, and `source` naming the placement. Tables held as written that
carry lengths or masses in the child's units are carried with their meaning:
a tank's CG table is moved like any CG, a tolerance's CG spread is taken
through T (exact for the usual quarter turns and mirrors), its mass keeps the
child's unit. Columns are transformed in bulk; only the Item objects are
made one by one, from what a child's items give once (`_Plan`, kept with the
child's ledger: a file placed four times is gathered once).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from steelyard.core.assembly.placement import Placement
from steelyard.core.control.uncertainty import parse_tolerances
from steelyard.core.document.model import NO_UNITS, FileUnits, Frame, Item, ItemArrays, Ledger, item_with, items_replaced
from steelyard.core.document.pinning import pin_units
from steelyard.core.loading.tank import tank_tables
from steelyard.core.physics.inertia import six_from_tensor
from steelyard.core.units import unit_factor


@dataclass(frozen=True)
class Placed:
    """One placement in a resolved tree: which rows of the flat ledger it holds."""

    id: str  # full id: "pod-left", or "wing-l/pod-2" when nested
    file: str  # the placed file's path, as the tree reader names it
    sha256: str  # of that file's bytes, as read
    start: int
    stop: int
    placement: Placement  # as read, in the frame of the file that places it
    depth: int = 1
    #: the placed file's own resolved ledger (SI, its own frame): what an edit re-places
    ledger: Ledger | None = field(default=None, compare=False, repr=False)

    @property
    def rows(self) -> slice:
        return slice(self.start, self.stop)


def group_prefix(p: Placement) -> str:
    """The group path a placement's items sit under: its `group`, then its id (each assembly is a group)."""
    return f"{p.group}/{p.id}" if p.group else p.id


def _clean(six: np.ndarray) -> np.ndarray:
    """Rounding noise of a turn (1e-21 products beside 1e-4 moments, -0.0) set to exact zero."""
    scale = np.abs(six[:, :3]).max(axis=1, keepdims=True)
    out = np.where(np.abs(six) <= 1e-14 * scale, 0.0, six)
    return out + 0.0


def transform_columns(arrays: ItemArrays, t: np.ndarray, at: np.ndarray) -> ItemArrays:
    """The child's columns in the parent's frame: cg -> at + T·cg, own -> T·own·Tᵀ."""
    cg = np.asfortranarray(arrays.cg @ t.T + at)
    rows, values = arrays.own_sparse()
    own = np.einsum("ij,njk,lk->nil", t, values, t, optimize=True) if len(rows) else values
    return ItemArrays.sparse(arrays.unit_mass, arrays.quantity, cg, arrays.variable, rows, own)


@dataclass(frozen=True)
class _Plan:
    """What placing a child needs from its items, gathered once per child ledger (placed many times)."""

    ids: list  # item ids
    groups: list  # item groups
    group_set: tuple  # the distinct groups
    sources: list  # item sources (None: the child's own item)
    source_set: tuple
    own_rows: np.ndarray  # rows with an own inertia (inertia or shape)
    tolerance_rows: tuple  # rows with a tolerance


def _plan(child: Ledger) -> _Plan:
    cached = child.__dict__.get("_placing")
    if cached is not None:
        return cached
    items = child.items
    ids = [it.id for it in items]
    groups = [it.group for it in items]
    sources = [it.source for it in items]
    own = np.flatnonzero(np.fromiter((it.inertia is not None or it.shape is not None for it in items), bool,
                                     len(items)))
    tol = tuple(i for i, it in enumerate(items) if it.tolerance is not None)
    plan = _Plan(ids, groups, tuple(set(groups)), sources, tuple(set(sources)), own, tol)
    child.__dict__["_placing"] = plan  # a ledger is immutable; an edit makes a new one
    return plan


def place(child: Ledger, p: Placement, parent_units: FileUnits, parent_frame: Frame
          ) -> tuple[list[Item], ItemArrays]:
    """Items and columns of `child` (a resolved ledger, SI) placed by `p` into the parent."""
    t = p.matrix(child.frame, parent_frame)
    arrays = transform_columns(child.arrays, t, p.at)
    plan = _plan(child)
    items = child.items
    n = len(items)
    pid = p.id
    head = pid + "/"
    prefix = group_prefix(p)
    ids = [head + i for i in plan.ids]
    group_of = {g: f"{prefix}/{g}" if g else prefix for g in plan.group_set}
    groups = list(map(group_of.__getitem__, plan.groups))
    source_of = {s: head + s if s else pid for s in plan.source_set}
    sources = list(map(source_of.__getitem__, plan.sources))
    cgs = list(map(tuple, arrays.cg.tolist()))
    inertia: list = [None] * n
    if len(plan.own_rows):
        six = _clean(six_from_tensor(arrays.own[plan.own_rows])).tolist()
        for i, x in zip(plan.own_rows.tolist(), six):
            inertia[i] = tuple(x)
    out = _copies(items, ids, groups, cgs, inertia, sources)
    length_f = unit_factor(parent_units.length, "length")
    tanks = tank_tables(child)
    for i in tanks:
        pos = tanks[i].cg @ t.T + p.at
        out[i] = _evolved(out[i], cg_table=[[float(f), *(float(x) / length_f for x in row)]
                                            for f, row in zip(tanks[i].fraction, pos)])
    if plan.tolerance_rows:
        tolerances = parse_tolerances(child)
        for i in plan.tolerance_rows:
            out[i] = _evolved(out[i], tolerance=_placed_tolerance(items[i].tolerance, i, tolerances, t,
                                                                  child.units, length_f))
    return out, arrays


def _copies(items, ids, groups, cgs, inertia, sources) -> list[Item]:
    """Read-only copies of `items` with these ids, groups, CGs, own inertias and sources, in the parent."""
    return items_replaced(items, {"id": ids, "group": groups, "cg": cgs, "inertia": inertia, "source": sources},
                          shape=None, rotate=(), given_units=NO_UNITS)


_evolved = item_with


def _placed_tolerance(tol, i: int, parsed, t: np.ndarray, child_units: FileUnits, length_f: float) -> dict:
    """A tolerance moved to the parent: mass keeps the child's unit, the CG spread goes through T."""
    out = {k: v for k, v in pin_units(tol, "tolerance", child_units).items() if k != "cg"}
    if "cg" in tol:
        mass_sigma, cg_sigma, mass_bound, cg_bound = parsed
        if tol.get("kind") == "sigma":  # independent errors: σ_parent² = Σ T_ij² σ_j²
            spread = np.sqrt((t * t) @ (cg_sigma[i] ** 2))
        else:  # bounds: |Σ T_ij e_j| <= Σ |T_ij| b_j
            spread = np.abs(t) @ cg_bound[i]
        out["cg"] = [float(x) / length_f for x in spread]
    return out


def concatenate(parts: Sequence[ItemArrays]) -> ItemArrays:
    """One ledger's columns after another's; own inertia stays sparse (rows shifted by each part's start)."""
    starts = np.cumsum([0] + [len(a.unit_mass) for a in parts[:-1]])
    sparse = [a.own_sparse() for a in parts]
    rows = np.concatenate([np.empty(0, np.intp)] + [r + s for (r, _), s in zip(sparse, starts)])
    values = np.concatenate([np.empty((0, 3, 3))] + [v for _, v in sparse]).reshape(-1, 3, 3)
    return ItemArrays.sparse(np.concatenate([a.unit_mass for a in parts]),
                             np.concatenate([a.quantity for a in parts]),
                             np.asfortranarray(np.concatenate([a.cg for a in parts]).reshape(-1, 3)),
                             np.concatenate([a.variable for a in parts]), rows, values)


def nested_records(child: Ledger, p: Placement, file: str, sha256: str, start: int) -> list[Placed]:
    """This placement's record and its child's own placements, renamed and shifted to the parent's rows."""
    out = [Placed(p.id, file, sha256, start, start + len(child.items), p, 1, child)]
    for q in child.placed:
        out.append(Placed(f"{p.id}/{q.id}", q.file, q.sha256, start + q.start, start + q.stop, q.placement,
                          q.depth + 1, q.ledger))
    return out


def placed_totals(placed: Placed, mass: np.ndarray, cg: np.ndarray) -> tuple[float, np.ndarray]:
    """(mass, CG) of one placement's rows in a loaded state (CG nan when it carries nothing)."""
    m = mass[placed.rows]
    total = float(m.sum())
    if total <= 0:
        return total, np.full(3, np.nan)
    return total, (m @ cg[placed.rows]) / total
