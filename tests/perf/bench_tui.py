"""The editor on a 100,000-item ledger: first paint, a keystroke in the item form, one edit.

1. Time to first paint: from creating the App to the ledger table's first
   painted line with data (the load runs in a worker thread, as for a user),
   as a ratio of `steelyard rollup --json FILE` run in the same process on
   the same file (goal <= 1.1). Both sides read the file afresh (the read
   cache is off for the whole run: STEELYARD_NO_CACHE=1), each run starts
   with the earlier runs' garbage collected, and the figure is the best of
   5 each, in wall time and in CPU time of the process (CPU time leaves out
   the waits for a core on a shared machine; the reader holds the GIL, so
   the screen thread's work adds to it all the same).
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
import gc
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
os.environ["STEELYARD_NO_CACHE"] = "1"  # both sides read the file afresh (else runs after the first hit the cache)

from make_ledger import write_ledger  # noqa: E402

from steelyard.cli.main import main as cli_main  # noqa: E402
from steelyard.io.durability.journal import journal_path  # noqa: E402
from steelyard.tui.app import SteelyardApp  # noqa: E402


def clean_slate() -> None:
    """The earlier runs' garbage collected before a timed run, on either side.

    Else one side pays for the other's leftovers (an App's cycles, found by a
    full collection during the next run; the CLI freezes what it read)."""
    gc.unfreeze()
    gc.collect()


def cli_rollup(path: Path) -> tuple[float, float]:
    """(wall, CPU) seconds of `steelyard rollup --json FILE` in this process."""
    out = io.StringIO()
    clean_slate()
    t, c = time.perf_counter(), time.process_time()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(io.StringIO()):
        code = cli_main(["rollup", "--json", str(path)])
    elapsed, cpu = time.perf_counter() - t, time.process_time() - c
    assert code == 0 and '"mass' in out.getvalue()
    return elapsed, cpu


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


@contextlib.contextmanager
def cpu_at_paint(got: list[float]):
    """The process's CPU time when the table renders its first line with data (appended to `got`)."""
    from steelyard.tui.widgets.ledger_table import LedgerTable

    plain = LedgerTable.render_line

    def render_line(self, y):
        strip = plain(self, y)
        if not got and self.painted_at is not None:
            got.append(time.process_time())
        return strip

    LedgerTable.render_line = render_line
    try:
        yield
    finally:
        LedgerTable.render_line = plain


async def first_paint(path: Path, edits: int = 0, keys: bool = False):
    """((wall, CPU) seconds to the first painted data line, edit times, keystroke times)."""
    clean_slate()
    cpu: list[float] = []
    edit_times: list[float] = []
    key_times: list[float] = []
    with cpu_at_paint(cpu):
        t0, c0 = time.perf_counter(), time.process_time()
        app = SteelyardApp(str(path))
        async with app.run_test(size=(100, 32)) as pilot:
            # coarse polling: the time is the table's own stamp; each wake-up of this
            # thread would take the GIL from the reader (the harness's cost, not the editor's)
            while app.session is None or app.main.table.painted_at is None:
                await asyncio.sleep(0.05)
            paint = (app.main.table.painted_at - t0, cpu[0] - c0)
            await run_after_paint(app, pilot, edits, keys, edit_times, key_times)
    return paint, edit_times, key_times


async def run_after_paint(app, pilot, edits: int, keys: bool, edit_times: list[float], key_times: list[float]):
    """After the first paint: the keystrokes in the form, then the edits (each timed)."""
    await app.workers.wait_for_complete()
    await pilot.pause()
    if keys:
        key_times += await form_keys(app, pilot)
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


#: runs of each side for the first paint ratio (best of)
RUNS = 5


def runs(pairs: list[tuple[float, float]], k: int) -> str:
    return ", ".join(f"{p[k]:.2f}" for p in pairs)


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
        for run in range(RUNS):
            cli.append(cli_rollup(path))
            paint, edits, keys = asyncio.run(first_paint(path, edits=15 if run == 0 else 0, keys=run == 0))
            journal_path(path).unlink(missing_ok=True)  # else the next open offers the edits back (a dialog)
            tui.append(paint)
            edit_times += edits
            key_times += keys
        wall_cli, wall_tui = min(w for w, _ in cli), min(w for w, _ in tui)
        cpu_cli, cpu_tui = min(c for _, c in cli), min(c for _, c in tui)
        pairs = sorted(t[0] / c[0] for c, t in zip(cli, tui))  # each run against the CLI run just before it
        cpu_pairs = sorted(t[1] / c[1] for c, t in zip(cli, tui))
        edit = statistics.median(edit_times)
        core = core_share(path)
        bare = numpy_pass(path)
        key = statistics.median(key_times)
        print(f"file: {path} ({path.stat().st_size / 1e6:.1f} MB)")
        print(f"steelyard rollup --json (in process) {wall_cli:7.3f} s   runs {runs(cli, 0)}")
        print(f"editor: first paint of the table     {wall_tui:7.3f} s   runs {runs(tui, 0)}")
        print(f"first paint / rollup --json          {wall_tui / wall_cli:7.2f}     "
              f"(goal <= 1.1; wall, best of {RUNS} each)")
        print(f"  in CPU time {cpu_tui:.3f} s / {cpu_cli:.3f} s      {cpu_tui / cpu_cli:7.2f}     "
              f"(CPU runs: rollup {runs(cli, 1)}; editor {runs(tui, 1)})")
        print(f"  each editor run / the rollup just before it: median {statistics.median(pairs):.2f} "
              f"({pairs[0]:.2f}-{pairs[-1]:.2f}) wall, {statistics.median(cpu_pairs):.2f} "
              f"({cpu_pairs[0]:.2f}-{cpu_pairs[-1]:.2f}) CPU")
        print(f"form keystroke -> preview updated    {key * 1000:7.1f} ms  median of {len(key_times)}, "
              f"max {max(key_times) * 1000:.1f} ms (goal <= 30 ms)")
        print(f"  / one bare numpy pass over the columns ({bare * 1000:.2f} ms)  {key / bare:7.1f}")
        print(f"edit -> totals repainted         {edit * 1000:7.1f} ms  median of {len(edit_times)}, "
              f"max {max(edit_times) * 1000:.1f} ms (goal <= 30 ms)")
        print(f"  of which core's totals of the edited ledger (best of 7) {core * 1000:.1f} ms")
        print(f"load average while running: {os.getloadavg()[0]:.1f} (other work on the machine skews times)")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 100_000, sys.argv[2] if len(sys.argv) > 2 else None)
