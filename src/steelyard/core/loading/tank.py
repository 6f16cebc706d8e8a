"""Tanks whose CG moves with fill: a table of (fraction, x, y, z), interpolated linearly.

Fuel settles to the bottom of a tank and follows its shape, so a wing tank's
CG moves as it drains. A variable item may carry ``cg_table``: rows of
[fill fraction, x, y, z] (lengths in the file's unit, or strings with their
unit). Between rows the CG is interpolated linearly; below the first row the
first row's CG holds (the contents weigh little there). The last row must be
fraction 1 and agree with the item's ``cg`` (the full tank), so the ledger
line and the table never tell two stories. Own inertia of the contents is
scaled with the mass carried and taken about the interpolated CG (common
practice; see docs/loadouts.md).

Tables are read once per ledger and kept with it; evaluation is vectorised
over any number of fill levels.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from steelyard.core.errors import SteelyardError, item_subject, said
from steelyard.core.document.model import ROW_CACHES, Ledger, more_rows, rows_with
from steelyard.core.units import field_to_si

KEY = "cg_table"
#: how far (m) the table's full row may sit from the item's cg: rounding, not a second opinion
FULL_ROW_TOL = 1e-6


@dataclass(frozen=True, eq=False)
class TankTable:
    """CG of one variable item's contents against fill fraction (SI)."""

    row: int  # the item's index in the ledger
    fraction: np.ndarray  # (r,) strictly increasing, last = 1
    cg: np.ndarray  # (r, 3) m

    def at(self, fill) -> np.ndarray:
        """CG (..., 3) at fill fraction(s); flat below the first row."""
        f = np.asarray(fill, dtype=float)
        return np.stack([np.interp(f, self.fraction, self.cg[:, k]) for k in range(3)], axis=-1)

    def linear_piece(self, fill: float) -> tuple[np.ndarray, np.ndarray]:
        """(c, d) with cg(f) = c + d·f on the table segment that holds `fill` (3,) each."""
        fr, cg = self.fraction, self.cg
        if fill <= fr[0]:
            return cg[0].copy(), np.zeros(3)
        i = int(np.clip(np.searchsorted(fr, fill, side="right") - 1, 0, len(fr) - 2))
        d = (cg[i + 1] - cg[i]) / (fr[i + 1] - fr[i])
        return cg[i] - d * fr[i], d


def _number(value, dimension: str, unit: str, where: str, field: str) -> float:
    return field_to_si(value, dimension, unit, subject=where, field=field)


def read_table(ledger: Ledger, row: int) -> TankTable:
    """Validate one item's ``cg_table`` and convert it to SI."""
    item = ledger.items[row]
    where = item_subject(item.id)
    raw = list(item.cg_table)
    if not item.variable:
        raise SteelyardError("only a variable item's CG can move with fill (set variable = true)",
                             subject=where, field=KEY)
    if type(raw) is not list or len(raw) < 2:
        raise SteelyardError("must be a list of at least 2 rows [fraction, x, y, z]", subject=where, field=KEY)
    unit = ledger.units.length
    fr, cg = [], []
    for j, r in enumerate(raw, start=1):
        field = f"{KEY} row {j}"
        if type(r) is not list or len(r) != 4:
            raise SteelyardError(f"must be [fraction, x, y, z], got {said(r)}"[:160], subject=where, field=field)
        f = r[0]
        if type(f) not in (int, float) or not (0.0 <= f <= 1.0):
            raise SteelyardError(f"fraction must be a number within 0..1, got {said(f)}", subject=where, field=field)
        fr.append(float(f))
        cg.append([_number(v, "length", unit, where, field) for v in r[1:]])
    fraction, pos = np.array(fr), np.array(cg)
    if (np.diff(fraction) <= 0).any():
        j = int(np.argmax(np.diff(fraction) <= 0)) + 2
        raise SteelyardError("fractions must increase from row to row", subject=where, field=f"{KEY} row {j}")
    if fraction[-1] != 1.0:
        raise SteelyardError("the last row must be the full tank, fraction 1", subject=where, field=KEY)
    off = float(np.max(np.abs(pos[-1] - np.asarray(item.cg))))
    if off > FULL_ROW_TOL:
        raise SteelyardError(f"the full row (fraction 1) must equal the item's cg; it is {off * 1000:.3g} mm "
                             "away", subject=where, field=KEY)
    fraction.setflags(write=False)
    pos.setflags(write=False)
    return TankTable(row, fraction, pos)


def tank_tables(ledger: Ledger) -> dict[int, TankTable]:
    """Every item's CG table, by item index; read once per ledger and kept with it."""
    cached = ledger.__dict__.get("_tank_tables")
    if cached is None:
        cached = {i: read_table(ledger, i) for i in rows_with(ledger.items, "cg_table", among=more_rows(ledger))}
        ledger.__dict__["_tank_tables"] = cached  # a ledger is immutable; an edit makes a new one
    return cached


def _carry_tables(old: Ledger, new: Ledger, row: int) -> None:
    """After a one-row edit: reuse the old ledger's tables, re-reading only that row."""
    cached = old.__dict__.get("_tank_tables")
    if cached is None:
        return
    tables = dict(cached)
    tables.pop(row, None)
    item = new.items[row]
    if item.cg_table is not None:
        tables[row] = read_table(new, row)
    new.__dict__["_tank_tables"] = tables


ROW_CACHES.append(_carry_tables)


def cg_for_fill(ledger: Ledger, fill: np.ndarray) -> np.ndarray:
    """Per-row CG (n, 3) at these fill fractions: the ledger's column, table rows interpolated."""
    tables = tank_tables(ledger)
    base = ledger.arrays.cg
    if not tables:
        return base
    cg = base.copy(order="F")
    for i, t in tables.items():
        cg[i] = t.at(fill[i])
    return cg
