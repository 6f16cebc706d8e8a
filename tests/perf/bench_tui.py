"""The editor on a 100,000-item ledger: first paint, and one edit until the totals repaint.

1. Time to first paint: from creating the App to the ledger table's first
   painted line with data (the load runs in a worker thread, as for a user),
   as a ratio of `steelyard rollup FILE` run in the same process on the same
   file (goal <= 1.3).
2. One edit -> totals repainted: a changed item goes through the same path
   as the form's Apply (session + change log + repaint) until the totals
   strip under the table has rendered the new numbers (goal <= 30 ms).

Headless (Textual's run_test) at 100x32. Best of a few runs for the ratio,
median of 15 edits for the edit time. Not a test: it prints figures.

Run: python tests/perf/bench_tui.py [N] [FILE]
"""

from __future__ import annotations

import asyncio
import contextlib
import io
import os
import statistics
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

from make_ledger import write_ledger  # noqa: E402

from steelyard.cli.main import main as cli_main  # noqa: E402
from steelyard.tui.app import SteelyardApp  # noqa: E402


def cli_rollup(path: Path) -> float:
    out = io.StringIO()
    t = time.perf_counter()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(io.StringIO()):
        code = cli_main(["rollup", str(path)])
    elapsed = time.perf_counter() - t
    assert code == 0 and "Totals" in out.getvalue()
    return elapsed


async def first_paint(path: Path, edits: int = 0) -> tuple[float, list[float]]:
    t0 = time.perf_counter()
    app = SteelyardApp(str(path))
    edit_times: list[float] = []
    async with app.run_test(size=(100, 32)) as pilot:
        while app.session is None or app.main.table.painted_at is None:
            await asyncio.sleep(0.005)
        paint = app.main.table.painted_at - t0
        await app.workers.wait_for_complete()
        await pilot.pause()
        strip = app.main.query_one("#summary")
        ledger = app.session.ledger
        for k in range(edits):
            item = ledger.items[1000 + k]
            new = app.session.ledger.with_item(item.evolve(mass=item.mass * 1.01))
            t = time.perf_counter()
            app._apply(new, action="edit", item=item.id, summary=f"bench edit {k}")
            while strip.painted_at is None or strip.painted_at < t:
                await asyncio.sleep(0)
            edit_times.append(strip.painted_at - t)
            await app.workers.wait_for_complete()
            await pilot.pause()
        app.session.release_lock()
    return paint, edit_times


def core_share(path: Path, repeat: int = 7) -> float:
    """Best time of core's own work for one edit's totals (a fresh Ledger, resolve, roll-up, envelopes)."""
    from steelyard.io.ledger.file import open_ledger
    from steelyard.tui.state.session import compute_totals

    ledger = open_ledger(path).ledger
    best = float("inf")
    for k in range(repeat):
        item = ledger.items[2000 + k]
        new = ledger.with_item(item.evolve(mass=item.mass * 1.01))
        t = time.perf_counter()
        compute_totals(new, None)
        best = min(best, time.perf_counter() - t)
    return best


def main(n: int = 100_000, given: str | None = None) -> None:
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(given) if given else Path(tmp) / "big.toml"
        if not given:
            write_ledger(path, n, seed=1)
        cli, tui = [], []
        edit_times: list[float] = []
        for run in range(3):
            cli.append(cli_rollup(path))
            paint, edits = asyncio.run(first_paint(path, edits=15 if run == 0 else 0))
            tui.append(paint)
            edit_times += edits
        best_cli, best_tui = min(cli), min(tui)
        edit = statistics.median(edit_times)
        core = core_share(path)
        print(f"file: {path} ({path.stat().st_size / 1e6:.1f} MB)")
        print(f"steelyard rollup (in process)    {best_cli:7.3f} s   runs {', '.join(f'{x:.2f}' for x in cli)}")
        print(f"editor: first paint of the table {best_tui:7.3f} s   runs {', '.join(f'{x:.2f}' for x in tui)}")
        print(f"first paint / roll-up            {best_tui / best_cli:7.2f}     (goal <= 1.3)")
        print(f"edit -> totals repainted         {edit * 1000:7.1f} ms  median of {len(edit_times)}, "
              f"max {max(edit_times) * 1000:.1f} ms (goal <= 30 ms)")
        print(f"  of which core's totals of the edited ledger (best of 7) {core * 1000:.1f} ms")
        print(f"load average while running: {os.getloadavg()[0]:.1f} (other work on the machine skews times)")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 100_000, sys.argv[2] if len(sys.argv) > 2 else None)
