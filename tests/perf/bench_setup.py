"""A set-up form's check on every keystroke vs an item edit, on a large ledger.

One keystroke in the limit form builds the table, runs the reader's checks on
the whole ledger (`setup_tables.with_entry`: schema, `validate_document`) and
the preview (`setup_preview.effect_lines`: `check_ledger` of every loadout).
The baseline, in the same process on the same ledger, is an item edit's own
work: `edits.replace_item` plus the totals of the new ledger
(`totals.compute_totals`). Prints medians and their ratio; not a test.

Run: python tests/perf/bench_setup.py [N]
"""

from __future__ import annotations

import statistics
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

from make_ledger import write_ledger  # noqa: E402

from steelyard.core.display import DisplayUnits  # noqa: E402
from steelyard.io.ledger.file import load_ledger  # noqa: E402
from steelyard.tui.state.edits import replace_item  # noqa: E402
from steelyard.tui.state.setup_preview import effect_lines  # noqa: E402
from steelyard.tui.state.setup_tables import with_entry  # noqa: E402
from steelyard.tui.state.totals import compute_totals  # noqa: E402


def median_time(fn, runs: int = 7) -> float:
    times = []
    for _ in range(runs):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return statistics.median(times)


def main() -> None:
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 100_000
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "big.toml"
        write_ledger(path, n)
        ledger = load_ledger(path)
    loadout = ledger.loadouts[0].name if ledger.loadouts else None
    du = DisplayUnits.choose(ledger.units, None)
    item = ledger.items[n // 2]
    k = [0]

    def item_edit():
        k[0] += 1
        new = replace_item(ledger, item.id, item.evolve(mass=item.mass + k[0] * 1e-3))
        compute_totals(new, loadout)

    def setup_check():
        k[0] += 1
        table = {"name": "mtow", "max_mass": 1000 + k[0]}
        new = with_entry(ledger, "limit", None, table)
        effect_lines("limit", "mtow", new, loadout, du)

    def setup_table_only():
        k[0] += 1
        with_entry(ledger, "limit", None, {"name": "mtow", "max_mass": 1000 + k[0]})

    base = median_time(item_edit)
    check = median_time(setup_table_only)
    whole = median_time(setup_check)
    print(f"{n:,} items, {len(ledger.loadouts)} loadouts")
    print(f"item edit (replace + totals):      {base * 1e3:8.1f} ms  (baseline)")
    print(f"set-up table check (reader checks): {check * 1e3:8.1f} ms  ratio {check / base:5.2f}")
    print(f"set-up check + preview:             {whole * 1e3:8.1f} ms  ratio {whole / base:5.2f}")


if __name__ == "__main__":
    main()
