"""The editor's refresh after a placed file was saved, on a tree of 100 placements x 1,000 items.

A user opens one of the 100 placed files in place, edits it, saves, and goes
back: the parent places the saved contents again (`Session.placed_file_saved`:
`core.assembly.edit.with_placed_file`, one splice, no re-read) and rolls up
its totals (`Session.totals`). That refresh is timed (goal <= 30 ms) and
printed as a ratio of a bare numpy pass over the same columns
(`unit_mass @ cg`, 100,000 rows), with a plain roll-up of a fresh copy of
the same flat ledger beside it for scale. Median of 15 refreshes, each a new
version of the child (so no roll-up is remembered). Not a test: it prints
figures.

Run: python tests/perf/bench_assembly_tui.py [PLACEMENTS] [ITEMS_PER_FILE]
"""

from __future__ import annotations

import os
import statistics
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

from make_ledger import write_ledger  # noqa: E402

from steelyard.io.ledger.file import open_ledger  # noqa: E402
from steelyard.tui.state.edits import replace_item  # noqa: E402
from steelyard.tui.state.session import Session  # noqa: E402
from steelyard.tui.state.totals import compute_totals  # noqa: E402


def build_tree(folder: Path, placements: int, items: int) -> Path:
    """`placements` child files of `items` items each, placed on a grid, some mirrored or turned."""
    (folder / "parts").mkdir()
    lines = ['steelyard = 1', '', '[units]', 'mass = "lb"', 'length = "in"', 'inertia = "lb*in**2"', '']
    for k in range(placements):
        write_ledger(folder / "parts" / f"part-{k:03d}.toml", items, seed=k)
        lines += ["[[assembly]]", f'id = "a{k:03d}"', f'file = "parts/part-{k:03d}.toml"',
                  f'group = "zone-{k % 7}"', f"at = [{10.0 * (k % 10)}, {20.0 * (k // 10)}, 5.0]"]
        if k % 3 == 1:
            lines.append('mirror = "y"')
        if k % 4 == 2:
            lines.append('rotate = [["z", 90.0]]')
        lines.append("")
    path = folder / "vehicle.toml"
    path.write_text("\n".join(lines))
    return path


def best(fn, runs: int = 50) -> float:
    out = []
    for _ in range(runs):
        t = time.perf_counter()
        fn()
        out.append(time.perf_counter() - t)
    return min(out)


def main(argv: list[str]) -> int:
    placements = int(argv[0]) if argv else 100
    items = int(argv[1]) if len(argv) > 1 else 1000
    with tempfile.TemporaryDirectory() as tmp:
        t = time.perf_counter()
        path = build_tree(Path(tmp), placements, items)
        loaded = open_ledger(path)
        ledger = loaded.ledger
        print(f"tree: {placements} placements x {items} items = {len(ledger.items):,} rows "
              f"(written and read in {time.perf_counter() - t:.1f} s)")
        session = Session(ledger, loaded=loaded)
        session.totals()
        file = "parts/part-042.toml" if placements > 42 else "parts/part-000.toml"
        child = open_ledger(Path(tmp) / file).ledger
        target = child.items[len(child.items) // 2]
        times, splices = [], []
        for k in range(15):
            edited = replace_item(child, target.id, target.evolve(mass=target.mass * (1.0 + 0.01 * (k + 1))))
            edited.arrays  # noqa: B018 - built as the child's session had it when it saved
            t = time.perf_counter()
            session.placed_file_saved(file, edited, f"{k:064x}")
            spliced = time.perf_counter()
            totals = session.totals()
            times.append(time.perf_counter() - t)
            splices.append(spliced - t)
            assert totals.mp is not None
        refresh, fastest = statistics.median(times), min(times)
        a = session.ledger.arrays
        bare = best(lambda: a.unit_mass @ a.cg)
        fresh = session.ledger
        full = best(lambda: compute_totals(_copy(fresh), None), 5)
        print(f"refresh after a placed file's save (with_placed_file + totals), median of 15: "
              f"{refresh * 1e3:.2f} ms, best {fastest * 1e3:.2f} ms (goal <= 30 ms); "
              f"load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores")
        print(f"  of which the splice (with_placed_file): median {statistics.median(splices) * 1e3:.2f} ms")
        print(f"bare numpy pass (unit_mass @ cg, {len(a.unit_mass):,} rows): {bare * 1e3:.3f} ms; "
              f"ratio refresh / bare = {refresh / bare:.0f}")
        print(f"plain roll-up of the same flat ledger (compute_totals, columns built): {full * 1e3:.2f} ms; "
              f"ratio refresh / roll-up = {refresh / full:.2f}")
    return 0


def _copy(ledger):
    """A new ledger object with the same columns, so the roll-up is not remembered."""
    new = ledger.evolve()
    for cache in ("arrays", "index", "_tank_tables"):  # built once per ledger, not part of a roll-up
        if cache in ledger.__dict__:
            new.__dict__[cache] = ledger.__dict__[cache]
    return new


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
