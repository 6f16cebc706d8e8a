"""Loadouts: how much of each variable item is on board, and which optional items are fitted.

A loadout turns the ledger into a *state*: the mass, CG and own inertia of
every row as carried. Variable items a loadout does not name are empty. A
partly filled item keeps its CG (or follows its ``cg_table``, see core.tank)
and has its own inertia scaled by the fill fraction.

Keys a loadout may carry beyond the contract (docs/loadouts.md):
``base`` (start from another loadout and override it), ``off`` / ``on``
(fixed items marked ``removable = true`` left off, or fitted again over a
base), ``condition`` (ramp, takeoff or landing; default takeoff), which
selects the limits that apply to it.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from steelyard.core.errors import SteelyardError
from steelyard.core.errors import said
from steelyard.core.document.model import Amount, Item, Ledger, Loadout
from steelyard.core.loading.tank import cg_for_fill

#: conditions a loadout may declare; "zero-fuel" is derived from a loadout, never declared
CONDITIONS = ("ramp", "takeoff", "landing")
DEFAULT_CONDITION = "takeoff"


@dataclass(frozen=True)
class State:
    """The vehicle as loaded: per-row totals (quantity and fill applied), SI."""

    name: str | None
    mass: np.ndarray  # (n,)
    cg: np.ndarray  # (n, 3)
    own_rows: np.ndarray  # (k,) rows with an own inertia (sparse: most items have none)
    own_values: np.ndarray  # (k, 3, 3) their tensors, quantity and fill applied
    fill: np.ndarray  # (n,) 1 for fixed items, 0..1 for variable ones

    def own_sparse(self) -> tuple[np.ndarray, np.ndarray]:
        return self.own_rows, self.own_values

    @property
    def own(self) -> np.ndarray:
        """(n, 3, 3) dense own inertia, made on first use."""
        dense = self.__dict__.get("_own")
        if dense is None:
            dense = np.zeros((len(self.mass), 3, 3))
            if len(self.own_rows):
                dense[self.own_rows] = self.own_values
            object.__setattr__(self, "_own", dense)
        return dense


def amount_fraction(ledger: Ledger, item_id: str, amount: Amount, where: str) -> float:
    """Fill fraction of a variable item for one loadout amount."""
    item = ledger.item(item_id)
    full = item.mass * item.quantity
    if amount.kind == "fraction":
        f = amount.value
    elif amount.kind == "mass":
        f = amount.value / full if full > 0 else (0.0 if amount.value == 0 else np.inf)
    elif amount.kind == "volume":
        if item.density is None:
            raise SteelyardError(f"{amount.given or 'a volume'} needs a density on item {said(item_id)}",
                                 subject=where, field=f"set.{item_id}")
        m = amount.value * item.density
        f = m / full if full > 0 else (0.0 if m == 0 else np.inf)
    else:  # pragma: no cover - the loader builds only the kinds above
        raise SteelyardError(f"unknown amount kind {said(amount.kind)}", subject=where)
    if not (0.0 <= f <= 1.0 + 1e-12):
        shown = amount.given or f"{amount.value:g}"
        raise SteelyardError(f"{shown} is more than item {said(item_id)} holds" if f > 1 else
                             f"{shown} is below empty", subject=where, field=f"set.{item_id}")
    return min(float(f), 1.0)


def chain(ledger: Ledger, name: str) -> list[Loadout]:
    """The loadout and its bases, root first. A base loop is an error."""
    seen: list[str] = []
    out: list[Loadout] = []
    current: str | None = name
    while current is not None:
        if current in seen:
            loop = " -> ".join(seen + [current])
            raise SteelyardError(f"base loop {loop}", subject=f"loadout {said(name)}", field="base")
        seen.append(current)
        try:
            lo = ledger.loadout(current)
        except KeyError:
            who = f"loadout {said(seen[-2])}" if len(seen) > 1 else None
            if who is None:
                known = ", ".join(repr(x.name) for x in ledger.loadouts) or "none"
                raise SteelyardError(f"no loadout named {said(current)} (loadouts: {known})",
                                     field="--loadout") from None
            raise SteelyardError(f"base {said(current)} is not a loadout", subject=who, field="base") from None
        out.append(lo)
        current = lo.base
    return out[::-1]


def is_removable(item: Item, where: str | None = None) -> bool:
    """True when a fixed item is marked ``removable = true`` (optional equipment)."""
    flag = item.removable
    if type(flag) is not bool:
        raise SteelyardError(f"must be true or false, got {said(flag)}", subject=where or f"item {said(item.id)}",
                             field="removable")
    return flag


def _id_list(lo: Loadout, key: str) -> list[str]:
    raw = getattr(lo, key)
    if raw is None:
        return []
    if isinstance(raw, str):
        raw = [raw]
    if type(raw) is not list or not all(isinstance(x, str) for x in raw):
        raise SteelyardError(f"must be a list of item ids, got {said(raw)}"[:160], subject=f"loadout {said(lo.name)}",
                             field=key)
    return raw


def removable_row(ledger: Ledger, item_id: str, where: str, field: str) -> int:
    """Index of a fixed removable item, or a located error saying why it is not one."""
    i = ledger.index.get(item_id)
    if i is None:
        raise SteelyardError(f"names unknown item {said(item_id)}", subject=where, field=field)
    item = ledger.items[i]
    if item.variable:
        raise SteelyardError(f"item {said(item_id)} is variable: set its amount (0 for none) instead",
                             subject=where, field=field)
    if not is_removable(item):
        raise SteelyardError(f"item {said(item_id)} is not removable equipment (mark it removable = true)",
                             subject=where, field=field)
    return i


def fill_fractions(ledger: Ledger, name: str | None) -> np.ndarray:
    """Fill fraction of every row: 1 for fixed items (0 when left off), the loadout's for variable ones.

    The chain of bases is applied root first, so a derived loadout overrides
    its base item by item; ``on`` fits again what a base left ``off``.
    """
    a = ledger.arrays
    fill = np.where(a.variable, 0.0, 1.0)
    if name is None:
        return fill
    for lo in chain(ledger, name):
        where = f"loadout {said(lo.name)}"
        for item_id, amount in lo.set.items():
            if item_id not in ledger.index:
                raise SteelyardError(f"names unknown item {said(item_id)}", subject=where, field=f"set.{item_id}")
            i = ledger.index[item_id]
            if not a.variable[i]:
                raise SteelyardError(f"item {said(item_id)} is not variable", subject=where, field=f"set.{item_id}")
            fill[i] = amount_fraction(ledger, item_id, amount, where)
        if lo.off is not None or lo.on is not None:
            off, on = _id_list(lo, "off"), _id_list(lo, "on")
            both = sorted(set(off) & set(on))
            if both:
                raise SteelyardError(f"item {said(both[0])} is both off and on", subject=where, field="on")
            for item_id in off:
                fill[removable_row(ledger, item_id, where, "off")] = 0.0
            for item_id in on:
                fill[removable_row(ledger, item_id, where, "on")] = 1.0
    return fill


def loadout_condition(ledger: Ledger, name: str | None) -> str:
    """The loadout's condition (ramp, takeoff, landing): its own, else its base's, else takeoff."""
    if name is None:
        return DEFAULT_CONDITION
    for lo in reversed(chain(ledger, name)):
        if lo.condition is not None:
            c = lo.condition
            if c not in CONDITIONS:
                raise SteelyardError(f"must be one of {', '.join(CONDITIONS)}, got {said(c)}",
                                     subject=f"loadout {said(lo.name)}", field="condition")
            return c
    return DEFAULT_CONDITION


def state_from_fill(ledger: Ledger, fill: np.ndarray, name: str | None = None) -> State:
    a = ledger.arrays
    scale = a.quantity * fill
    rows, values = a.own_sparse()
    return State(name, a.unit_mass * scale, cg_for_fill(ledger, fill), rows, values * scale[rows][:, None, None],
                 fill)


def resolve(ledger: Ledger, name: str | None = None) -> State:
    """The state of the vehicle under loadout `name` (None: variable items empty)."""
    return state_from_fill(ledger, fill_fractions(ledger, name), name)
