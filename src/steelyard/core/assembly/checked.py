"""A tree's per-row tables taken from its placed files, which were checked when each was read.

Placing copies a child's rows, so what each row says was already read and
checked in the child's own ledger (every placed file goes through the same
strict reader). Checking the parent then only needs its own rows, the placed
rows whose meaning depends on the parent (a maturity looked up in the
parent's [growth] table when the two tables differ) and the placed tank
tables (read again: their rows moved). Without this the parent of 100
assemblies x 1,000 items would scan all 100,000 rows once more per table.
"""

from __future__ import annotations

import numpy as np

from steelyard.core.control.growth import growth_fractions, growth_table
from steelyard.core.document.model import Ledger
from steelyard.core.loading.tank import read_table, tank_tables


def top_records(ledger: Ledger) -> list | None:
    """The placements this file makes itself (depth 1), or None when one lacks its child's ledger."""
    out = [q for q in ledger.placed if q.depth == 1]
    return out if all(q.ledger is not None for q in out) else None


def own_rows(ledger: Ledger, records: list) -> np.ndarray:
    """Rows that no placement holds: the file's own items."""
    mask = np.ones(len(ledger.items), bool)
    for q in records:
        mask[q.start:q.stop] = False
    return np.flatnonzero(mask)


def own_part(ledger: Ledger, rows: np.ndarray) -> Ledger:
    """The file's own rows alone (units, growth table kept): what per-item checks of the parent look at."""
    items = ledger.items
    return Ledger(tuple(items[i] for i in rows.tolist()), ledger.units, ledger.frame, growth=ledger.growth)


def seed_tables(ledger: Ledger, records: list, own: Ledger, rows: np.ndarray) -> None:
    """Tank tables and growth fractions of every row, from `own` and each placement's child (cached)."""
    n = len(ledger.items)
    tanks = {}
    for k, i in enumerate(rows.tolist()):  # the own rows, as their own ledger reads them, renumbered
        if own.items[k].cg_table is not None:
            tanks[i] = read_table(ledger, i)
    for q in records:
        for i in tank_tables(q.ledger):
            tanks[q.start + i] = read_table(ledger, q.start + i)  # moved and rescaled: read as placed
    fractions = np.zeros(n)
    fractions[rows] = growth_fractions(own)
    table = growth_table(ledger)
    for q in records:
        if growth_table(q.ledger) == table:  # the same categories and values: the child's own fractions
            fractions[q.start:q.stop] = growth_fractions(q.ledger)
        else:  # its maturities mean what the parent's table says
            fractions[q.start:q.stop] = growth_fractions(Ledger(ledger.items[q.start:q.stop], ledger.units,
                                                                growth=ledger.growth))
    fractions.setflags(write=False)
    ledger.__dict__.setdefault("_tank_tables", dict(sorted(tanks.items())))
    ledger.__dict__.setdefault("_growth_fractions", fractions)
