"""A ledger's mass history: one point per revision, from ledgers the caller reads.

The history itself (which commits, their dates, the file's bytes at each)
comes from io; this module only does the arithmetic. Each `Version` carries
a content key (git's blob hash) and a way to read its ledger: a key seen
before reuses its figures, so a file that went back to an earlier text is
read and added up once.

Per point: basic mass and CG of the whole vehicle (or of one group and its
subgroups) under a loadout, predicted mass = basic mass x (1 + growth
allowance) row by row (`core.control.growth`), the group's `[[allocation]]`
and margin = allocation - predicted (basic when the ledger has no growth,
as the allocation table of a roll-up says). A revision that cannot be read
or added up is kept in order with its one-line reason.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterable
from dataclasses import dataclass

import numpy as np

from steelyard.core.control.growth import allocation_margins, allocations, basic_and_predicted, growth_fractions
from steelyard.core.document.model import FileUnits, Ledger
from steelyard.core.errors import SteelyardError
from steelyard.core.loading.loadout import resolve
from steelyard.core.physics.rollup import check_finite_rollup, combined_cg, rollup_state


@dataclass(frozen=True)
class Figures:
    """The masses of one revision, SI; None where the ledger does not say (no growth, no allocation)."""

    mass_kg: float
    cg_m: tuple[float, float, float] | None  # None without mass
    predicted_kg: float | None
    allocation_kg: float | None
    margin_kg: float | None


@dataclass(frozen=True)
class Version:
    """One revision: the history's facts and a reader of its ledger (raises SteelyardError)."""

    rev: str
    date: str
    subject: str
    key: str | None  # same key, same ledger text (None: never reused)
    load: Callable[[], Ledger]


@dataclass(frozen=True)
class Point:
    """A revision on the trend: `figures`, or `reason` why it has none."""

    rev: str
    date: str
    subject: str
    figures: Figures | None
    reason: str | None = None


@dataclass(frozen=True)
class Trend:
    """Points oldest first; `units` are the newest readable ledger's (for display)."""

    points: tuple[Point, ...]
    loadout: str | None
    group: str
    units: FileUnits | None

    @property
    def read(self) -> list[Point]:
        return [p for p in self.points if p.figures is not None]

    @property
    def skipped(self) -> list[Point]:
        return [p for p in self.points if p.figures is None]


def has_growth(ledger: Ledger) -> bool:
    """The ledger says something about growth: a [growth] table, or an item's maturity or growth."""
    return ledger.growth is not None or any(it.maturity is not None or it.growth is not None
                                            for it in ledger.items)


def in_group(ledger: Ledger, group: str) -> np.ndarray:
    """Rows whose group is `group` or one of its subgroups ("" : every row)."""
    if not group:
        return np.ones(len(ledger.items), dtype=bool)
    prefix = group + "/"
    return np.fromiter(((g := it.group.strip("/")) == group or g.startswith(prefix) for it in ledger.items),
                       bool, len(ledger.items))


def _finite(value: float, what: str) -> float:
    if not math.isfinite(value):
        raise SteelyardError(f"the {what} is beyond a float ({value})")
    return float(value)


def figures(ledger: Ledger, loadout: str | None = None, group: str = "") -> Figures:
    """Mass, CG, predicted mass, allocation and margin of `group` ("" : the whole vehicle) under `loadout`."""
    if loadout is not None and loadout not in {lo.name for lo in ledger.loadouts}:
        raise SteelyardError(f"no loadout named {loadout!r} in this revision", field="--loadout")
    group = group.strip("/")
    state = resolve(ledger, loadout)
    if group:
        rows = in_group(ledger, group)
        mass, cg = combined_cg(state.mass[rows], state.cg[rows])
    else:
        rows = slice(None)
        mp = rollup_state(state)
        check_finite_rollup(mp, ledger)
        mass, cg = mp.mass, mp.cg
    mass = _finite(mass, "mass")
    grows = has_growth(ledger)
    fractions = growth_fractions(ledger) if grows or ledger.allocations else None
    predicted = None
    if grows:
        predicted = _finite(basic_and_predicted(state.mass[rows], state.cg[rows], fractions[rows])[2],
                            "predicted mass")
    allocation = margin = None
    if any(g == group for g, _ in allocations(ledger)):
        entry = next(a for a in allocation_margins(ledger, state.mass, fractions) if a["group"] == group)
        allocation = _finite(entry["allocation_kg"], "allocation")
        margin = _finite(entry["margin_kg"], "margin")
    shown_cg = tuple(float(c) for c in cg) if mass > 0 and np.isfinite(cg).all() else None
    return Figures(mass, shown_cg, predicted, allocation, margin)


def trend(versions: Iterable[Version], *, loadout: str | None = None, group: str = "") -> Trend:
    """The trend of `versions` (oldest first): figures per version, each distinct key read once."""
    seen: dict[str, tuple[Figures | None, str | None, FileUnits | None]] = {}
    points: list[Point] = []
    units = None
    for v in versions:
        if v.key is not None and v.key in seen:
            fig, reason, its_units = seen[v.key]
        else:
            fig, reason, its_units = None, None, None
            try:
                ledger = v.load()
                its_units = ledger.units
                fig = figures(ledger, loadout, group)
            except SteelyardError as exc:
                reason = str(exc)
            if v.key is not None:
                seen[v.key] = (fig, reason, its_units)
        if fig is not None:
            units = its_units
        points.append(Point(v.rev, v.date, v.subject, fig, reason))
    return Trend(tuple(points), loadout, group.strip("/"), units)
