"""Place a child ledger's items into the parent's frame: the flat ledger every command works on.

Each placed item is a read-only copy with the full id `<assembly id>/<item
id>`, its CG at `at + T·cg`, its own inertia T·I·Tᵀ written out as the six
components (shape and `rotate` are already in I), its group nested under the
placement, and `source` naming the placement. Tables held as written that
carry lengths or masses in the child's units are carried with their meaning:
a tank's CG table is moved like any CG, a tolerance's CG spread is taken
through T (exact for the usual quarter turns and mirrors), its mass keeps the
child's unit. Columns are transformed in bulk; only the Item objects are
made one by one.
"""

from __future__ import annotations

import operator
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


_ID, _GROUP, _SOURCE = (operator.attrgetter(k) for k in ("id", "group", "source"))


def _TOLERANCE(item: Item) -> bool:  # noqa: N802 - used like the attrgetters beside it
    return item.tolerance is not None


def _clean(six: np.ndarray) -> np.ndarray:
    """Rounding noise of a turn (1e-21 products beside 1e-4 moments, -0.0) set to exact zero."""
    scale = np.abs(six[:, :3]).max(axis=1, keepdims=True)
    out = np.where(np.abs(six) <= 1e-14 * scale, 0.0, six)
    return out + 0.0


def transform_columns(arrays: ItemArrays, t: np.ndarray, at: np.ndarray) -> ItemArrays:
    """The child's columns in the parent's frame: cg -> at + T·cg, own -> T·own·Tᵀ."""
    cg = np.asfortranarray(arrays.cg @ t.T + at)
    own = np.einsum("ij,njk,lk->nil", t, arrays.own, t, optimize=True)
    return ItemArrays(arrays.unit_mass, arrays.quantity, cg, own, arrays.variable)


def place(child: Ledger, p: Placement, parent_units: FileUnits, parent_frame: Frame
          ) -> tuple[list[Item], ItemArrays]:
    """Items and columns of `child` (a resolved ledger, SI) placed by `p` into the parent."""
    t = p.matrix(child.frame, parent_frame)
    arrays = transform_columns(child.arrays, t, p.at)
    prefix = group_prefix(p)
    has_own = np.fromiter((it.inertia is not None or it.shape is not None for it in child.items), bool,
                          len(child.items))
    six = _clean(six_from_tensor(arrays.own)).tolist() if has_own.any() else None
    cgs = arrays.cg.tolist()
    tanks = tank_tables(child)
    tolerances = parse_tolerances(child) if any(map(_TOLERANCE, child.items)) else None
    length_f = unit_factor(parent_units.length, "length")
    pid = p.id
    items = child.items
    ids = [f"{pid}/{i}" for i in map(_ID, items)]
    prefixed: dict[str, str] = {}
    groups = [prefixed.get(g) or prefixed.setdefault(g, f"{prefix}/{g}" if g else prefix)
              for g in map(_GROUP, items)]
    sources = [f"{pid}/{s}" if s else pid for s in map(_SOURCE, items)]
    inertia = [tuple(x) for x in six] if six is not None else [None] * len(items)
    if six is not None and not has_own.all():
        inertia = [x if h else None for x, h in zip(inertia, has_own.tolist())]
    out = items_replaced(items, {"id": ids, "group": groups, "cg": map(tuple, cgs), "inertia": inertia,
                                 "source": sources}, shape=None, rotate=(), given_units=NO_UNITS)
    for i in tanks:
        pos = tanks[i].cg @ t.T + p.at
        out[i] = item_with(out[i], cg_table=[[float(f), *(float(x) / length_f for x in row)]
                                             for f, row in zip(tanks[i].fraction, pos)])
    for i, it in enumerate(items):
        if it.tolerance is not None:
            out[i] = item_with(out[i], tolerance=_placed_tolerance(it.tolerance, i, tolerances, t, child.units,
                                                                   length_f))
    return out, arrays


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
    return ItemArrays(np.concatenate([a.unit_mass for a in parts]), np.concatenate([a.quantity for a in parts]),
                      np.asfortranarray(np.concatenate([a.cg for a in parts]).reshape(-1, 3)),
                      np.concatenate([a.own for a in parts]).reshape(-1, 3, 3),
                      np.concatenate([a.variable for a in parts]))


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
