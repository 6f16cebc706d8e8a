"""Whole commands at 100,000 items against `steelyard rollup --json` of the same ledger.

Builds a ledger (make_ledger.py) and a copy with small changes (bench_diff.perturb),
snapshots both under the loadout `full`, exports the first as CSV, then times as
whole processes, interleaved (rollup, diff, rollup, import, ...), and prints the
median of the pair-by-pair ratios:

- `steelyard diff SNAP_A SNAP_B --json` / `steelyard rollup A --json` (goal <= 1.3)
- `steelyard import A.csv -o OUT --force` / `steelyard rollup A --json` (goal <= 1.5)
- `steelyard export A --csv OUT` and `--json OUT` / `steelyard rollup A --json` (goal <= 1.0)
- `steelyard rollup A` (the text statement) / `steelyard rollup A --json` (goal <= 1.1)

Every child runs with STEELYARD_NO_CACHE=1: commands are compared as a first open (no reopen cache).
Times are the children's CPU time (user + sys), steadier than wall time on a shared machine.
Not collected by pytest.

    python tests/perf/bench_commands.py [N] [--repeat R] [--only WORD]

`--only diff` (or import, csv, json, text) times only the commands whose name holds the word.
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

from bench_diff import perturb  # noqa: E402
from make_ledger import ledger_text  # noqa: E402


ENV = {**os.environ, "STEELYARD_NO_CACHE": "1"}


def cpu(args: list[str]) -> float:
    before = os.times()
    subprocess.run(args, check=False, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, env=ENV)
    after = os.times()
    return (after.children_user - before.children_user) + (after.children_system - before.children_system)


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser()
    ap.add_argument("n", nargs="?", type=int, default=100_000)
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--only", metavar="WORD", help="time only the commands whose name holds WORD")
    args = ap.parse_args(argv)
    py = [sys.executable, "-m", "steelyard"]
    with tempfile.TemporaryDirectory() as tmp:
        a, b = os.path.join(tmp, "a.toml"), os.path.join(tmp, "b.toml")
        text = ledger_text(args.n, seed=7)
        Path(a).write_text(text)
        Path(b).write_text(perturb(text, 8)[0])
        sa, sb, csv, out = (os.path.join(tmp, f) for f in ("sa.toml", "sb.toml", "a.csv", "out.toml"))
        for src, snap in ((a, sa), (b, sb)):
            subprocess.run(py + ["snapshot", src, "--loadout", "full", "-o", snap], check=True,
                           stdout=subprocess.DEVNULL, env=ENV)
        subprocess.run(py + ["export", a, "--csv", csv], check=True, stdout=subprocess.DEVNULL,
                       stderr=subprocess.DEVNULL, env=ENV)
        rollup = py + ["rollup", a, "--json"]
        commands = {"diff of two snapshots": py + ["diff", sa, sb, "--json"],
                    "csv import": py + ["import", csv, "-o", out, "--force"],
                    "export --csv": py + ["export", a, "--csv", os.path.join(tmp, "x.csv")],
                    "export --json": py + ["export", a, "--json", os.path.join(tmp, "x.json")],
                    "text rollup": py + ["rollup", a]}
        if args.only:
            commands = {k: v for k, v in commands.items() if args.only in k}
        ratios: dict[str, list[float]] = {k: [] for k in commands}
        base: list[float] = []
        cpu(rollup)  # warm-up (file cache, bytecode)
        for _ in range(args.repeat):
            for name, cmd in commands.items():
                t_base = cpu(rollup)
                base.append(t_base)
                ratios[name].append(cpu(cmd) / t_base)
    print(f"{args.n:,} items; rollup --json median {statistics.median(base):.2f} s CPU; "
          f"medians of {args.repeat} interleaved pairs")
    for name, rs in ratios.items():
        print(f"{name:24s} / rollup --json = {statistics.median(rs):.2f}  (min {min(rs):.2f}, max {max(rs):.2f})")
    return 0


if __name__ == "__main__":
    sys.exit(main())
