"""The editor on a 100,000-item ledger: first paint, a keystroke in the item form, one edit.

1. Time to first paint: from creating the App to the ledger table's first
   painted line with data (the load runs in a worker thread, as for a user),
   as a ratio of `steelyard rollup --json FILE` run in the same process on
   the same file (goal <= 1.1).
2. Item form keystroke -> preview updated: a digit typed into the mass
   field of a fixed item until the preview under the form shows the new
   totals (a delta on the other rows' sums), in ms and as a ratio of one
   bare numpy pass over the mass and CG columns (goal <= 30 ms).
3. One edit -> totals repainted: a changed item goes through the same path
   as the form's Apply (session + change log + repaint) until the totals
   strip under the table has rendered the new numbers (goal <= 30 ms).

Headless (Textual's run_test) at 100x32. Best of a few runs for the ratio,
medians of 15 edits and 10 keystrokes. Not a test: it prints figures.

Run: python tests/perf/bench_tui.py [N] [FILE]
"""

from __future__ import annotations

import asyncio
import contextlib
import io
import os
import shutil
import statistics
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

from make_ledger import write_ledger  # noqa: E402

from steelyard.cli.main import main as cli_main  # noqa: E402
from steelyard.io.durability.journal import journal_path  # noqa: E402
from steelyard.tui.app import SteelyardApp  # noqa: E402


def cli_rollup(path: Path) -> float:
    out = io.StringIO()
    t = time.perf_counter()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(io.StringIO()):
        code = cli_main(["rollup", "--json", str(path)])
    elapsed = time.perf_counter() - t
    assert code == 0 and '"mass' in out.getvalue()
    return elapsed


async def form_keys(app, pilot, keys: str = "5025170393") -> list[float]:
    """Type digits into the mass field of a fixed item's form; each key's time until the preview changed."""
    from textual import events
    from textual.widgets import Static

    item = next(it for it in app.session.ledger.items[1000:] if not it.variable)
    await app.edit_item(item.id)
    await pilot.pause()
    preview = app.screen.query_one("#form-preview", Static)
    field = app.screen.query_one("#f-mass")
    field.focus()
    field.action_select_all()
    await pilot.pause()
    times = []
    for key in keys:
        before = str(preview.content)
        event = events.Key(key, key)
        event.set_sender(app)
        t = time.perf_counter()
        app._driver.send_message(event)  # as the terminal delivers it (Pilot.press also waits for idle CPU)
        while str(preview.content) == before:
            await asyncio.sleep(0)
        times.append(time.perf_counter() - t)
        await pilot.pause()
    await pilot.press("escape")
    await pilot.pause()
    return times


def numpy_pass(path: Path, repeat: int = 20) -> float:
    """Best time of one bare numpy pass over the columns: Σ m and Σ m r on the ledger's arrays."""
    import numpy as np

    from steelyard.io.ledger.file import open_ledger

    a = open_ledger(path).ledger.arrays
    mass, cg = a.unit_mass * a.quantity, np.ascontiguousarray(a.cg.T)
    best = float("inf")
    for _ in range(repeat):
        t = time.perf_counter()
        mass.sum()
        cg @ mass
        best = min(best, time.perf_counter() - t)
    return best


async def first_paint(path: Path, edits: int = 0, keys: bool = False) -> tuple[float, list[float], list[float]]:
    t0 = time.perf_counter()
    app = SteelyardApp(str(path))
    edit_times: list[float] = []
    key_times: list[float] = []
    async with app.run_test(size=(100, 32)) as pilot:
        while app.session is None or app.main.table.painted_at is None:
            await asyncio.sleep(0.005)
        paint = app.main.table.painted_at - t0
        await app.workers.wait_for_complete()
        await pilot.pause()
        if keys:
            key_times = await form_keys(app, pilot)
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
    return paint, edit_times, key_times


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
        path = Path(tmp) / (Path(given).name if given else "big.toml")
        if given:  # a private copy: the edits' journal must not be left beside the user's file
            shutil.copyfile(given, path)
        else:
            write_ledger(path, n, seed=1)
        cli, tui = [], []
        edit_times: list[float] = []
        key_times: list[float] = []
        for run in range(3):
            cli.append(cli_rollup(path))
            paint, edits, keys = asyncio.run(first_paint(path, edits=15 if run == 0 else 0, keys=run == 0))
            journal_path(path).unlink(missing_ok=True)  # else the next open offers the edits back (a dialog)
            tui.append(paint)
            edit_times += edits
            key_times += keys
        best_cli, best_tui = min(cli), min(tui)
        edit = statistics.median(edit_times)
        core = core_share(path)
        bare = numpy_pass(path)
        key = statistics.median(key_times)
        print(f"file: {path} ({path.stat().st_size / 1e6:.1f} MB)")
        print(f"steelyard rollup --json (in process) {best_cli:7.3f} s   runs {', '.join(f'{x:.2f}' for x in cli)}")
        print(f"editor: first paint of the table     {best_tui:7.3f} s   runs {', '.join(f'{x:.2f}' for x in tui)}")
        print(f"first paint / rollup --json          {best_tui / best_cli:7.2f}     (goal <= 1.1)")
        print(f"form keystroke -> preview updated    {key * 1000:7.1f} ms  median of {len(key_times)}, "
              f"max {max(key_times) * 1000:.1f} ms (goal <= 30 ms)")
        print(f"  / one bare numpy pass over the columns ({bare * 1000:.2f} ms)  {key / bare:7.1f}")
        print(f"edit -> totals repainted         {edit * 1000:7.1f} ms  median of {len(edit_times)}, "
              f"max {max(edit_times) * 1000:.1f} ms (goal <= 30 ms)")
        print(f"  of which core's totals of the edited ledger (best of 7) {core * 1000:.1f} ms")
        print(f"load average while running: {os.getloadavg()[0]:.1f} (other work on the machine skews times)")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 100_000, sys.argv[2] if len(sys.argv) > 2 else None)
