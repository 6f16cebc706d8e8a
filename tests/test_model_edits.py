from dataclasses import replace
"""One-row edits reuse cached columns; the result must equal a ledger built from scratch.

Reference: the same ledger rebuilt with `Ledger(items=...)`, whose columns and
tank tables are computed afresh (no carried cache).
"""

import numpy as np

from steelyard.core.loading.loadout import resolve
from steelyard.core.document.model import Ledger
from steelyard.core.physics.rollup import rollup_state
from steelyard.core.loading.tank import cg_for_fill
from steelyard.io.ledger.file import open_ledger

FIXTURE = __import__("pathlib").Path(__file__).resolve().parents[1] / "fixtures" / "trainer-overweight.toml"


def fresh(ledger: Ledger) -> Ledger:
    return replace(ledger)  # a new ledger object: every cached column and table rebuilt from scratch


def test_edit_of_one_row_matches_a_rebuild():
    led = open_ledger(FIXTURE).ledger
    names = [None] + [lo.name for lo in led.loadouts]
    for name in names:  # warm every cache
        rollup_state(resolve(led, name))
    tank_rows = [i for i, it in enumerate(led.items) if it.cg_table is not None]
    assert tank_rows, "the fixture must carry a tank CG table for this check to mean anything"
    edited_rows = tank_rows[:1] + [0]
    for row in edited_rows:
        it = led.items[row]
        if row in tank_rows:  # a table fixes its full CG; move its emptier rows instead
            table = [list(r) for r in it.cg_table]
            table[0][1] = table[0][1] + 5 if not isinstance(table[0][1], str) else table[0][1]
            new = led.with_item(it.evolve(mass=it.mass * 1.5, cg_table=tuple(table)))
        else:
            new = led.with_item(it.evolve(mass=it.mass * 1.5, cg=(it.cg[0] + 0.1, it.cg[1], it.cg[2])))
        ref = fresh(new)
        for name in names:
            a, b = rollup_state(resolve(new, name)), rollup_state(resolve(ref, name))
            assert a.mass == b.mass and np.array_equal(a.cg, b.cg) and np.array_equal(a.inertia_cg, b.inertia_cg)
        fill = np.linspace(0, 1, len(new.items))
        assert np.array_equal(cg_for_fill(new, fill), cg_for_fill(ref, fill))
