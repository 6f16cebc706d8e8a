"""Benchmark: a tree of assemblies against one flat ledger of the same items.

    python3 tests/perf/bench_assembly.py [--placements 100] [--per 1000] [--repeat 3]

Prints medians and ratios from one run (no timed assertions anywhere):
  tree of P distinct files x N items (open + roll-up) / one flat file of P*N items (open + roll-up)
  one file placed P times / the flat file
  editor refresh after a placed file was saved (core.assembly.edit.with_placed_file + totals), in ms,
  and as a ratio to one bare numpy pass over the same columns (unit_mass @ cg).
Goal (issue 13): tree <= 1.2x flat; the refresh <= 30 ms at 100k items.
"""

from __future__ import annotations

import argparse
import os
import statistics
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

from make_ledger import ledger_text  # noqa: E402

from steelyard.core.assembly.edit import with_placed_file  # noqa: E402
from steelyard.core.loading.loadout import resolve  # noqa: E402
from steelyard.core.physics.rollup import rollup_state  # noqa: E402
from steelyard.io.ledger.file import open_ledger  # noqa: E402


def _median(fn, repeat: int) -> float:
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def _open_and_roll(path: Path) -> None:
    led = open_ledger(path).ledger
    rollup_state(resolve(led, None))


def _tree_text(files: list[str]) -> str:
    lines = ["steelyard = 1", ""]
    for k, f in enumerate(files):
        lines += ["[[assembly]]", f'id = "a{k:03d}"', f'file = "{f}"', f"at = [{k * 0.5}, 0.0, 0.0]", ""]
    return "\n".join(lines)


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--placements", type=int, default=100)
    ap.add_argument("--per", type=int, default=1000)
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args(argv)
    p, n = args.placements, args.per
    with tempfile.TemporaryDirectory() as tmp:
        root = Path(tmp)
        flat = root / "flat.toml"
        flat.write_text(ledger_text(p * n, seed=1))
        (root / "parts").mkdir()
        names = []
        for k in range(p):
            name = f"parts/part{k:03d}.toml"
            (root / name).write_text(ledger_text(n, seed=100 + k))
            names.append(name)
        tree = root / "tree.toml"
        tree.write_text(_tree_text(names))
        same = root / "same.toml"
        same.write_text(_tree_text([names[0]] * p))

        # interleaved: flat, tree, same, flat, tree, same, ... so a busy machine slows all alike
        runs: dict[str, list[float]] = {"flat": [], "tree": [], "same": []}
        for _ in range(args.repeat):
            for name, path in (("flat", flat), ("tree", tree), ("same", same)):
                t0 = time.perf_counter()
                _open_and_roll(path)
                runs[name].append(time.perf_counter() - t0)
        t_flat, t_tree, t_same = (statistics.median(runs[k]) for k in ("flat", "tree", "same"))
        r_tree = statistics.median(t / f for t, f in zip(runs["tree"], runs["flat"]))
        r_same = statistics.median(t / f for t, f in zip(runs["same"], runs["flat"]))

        led = open_ledger(tree).ledger
        child = open_ledger(root / names[7]).ledger
        edited = child.with_item(child.items[0].evolve(mass=child.items[0].mass * 1.01))
        sha = "0" * 64

        def refresh() -> None:
            new = with_placed_file(led, names[7], edited, sha)
            rollup_state(resolve(new, None))

        refresh()
        t_refresh = _median(refresh, max(5, args.repeat))
        a = led.arrays
        t_numpy = _median(lambda: a.unit_mass @ a.cg, 20)
        size = os.path.getsize(flat) / 1e6
    print(f"items: {p * n:,} ({p} placements x {n:,}); flat file {size:.1f} MB; medians of {args.repeat}")
    print(f"flat file, open + roll-up            {t_flat:8.3f} s   1.00")
    print(f"tree of {p} distinct files            {t_tree:8.3f} s   {r_tree:.2f}x flat  (goal <= 1.2; median of pair ratios)")
    print(f"one file placed {p} times             {t_same:8.3f} s   {r_same:.2f}x flat")
    print(f"refresh after a placed file is saved {t_refresh * 1000:8.1f} ms  "
          f"{t_refresh / t_numpy:.0f}x one numpy pass ({t_numpy * 1000:.2f} ms)  (goal <= 30 ms)")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
