"""Start-up and whole-command ratios, each against a baseline run in turn with it.

    python tests/perf/bench_startup.py [--runs N] [--big N] [--skip-big]

Pairs (A / B, median of interleaved runs A B A B ...; CPU time of the child,
so a busy shared machine disturbs the ratio less than wall time):

    rollup tiny.toml (10 items)  /  python -c "import numpy"     goal <= 1.5
    steelyard --help             /  python -c "import numpy"     goal <= 1.2
    rollup big.toml (text)       /  rollup big.toml --json       goal <= 1.1
    export big.toml --csv OUT    /  rollup big.toml --json       goal <= 1.0
    export big.toml --json OUT   /  rollup big.toml --json       (printed for the record)

Every command runs as a user runs it, in a fresh interpreter (`python -m
steelyard`), with bytecode caching on (in a private temporary folder, as an
installed package has its .pyc files): timing source compilation would
measure the checkout, not the program. Output goes to /dev/null.
"""

from __future__ import annotations

import argparse
import os
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

from make_ledger import write_ledger  # noqa: E402


def _child_time(args: list[str], env: dict) -> tuple[float, float]:
    """(cpu seconds, wall seconds) of one run of `args` as a child process."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t = time.perf_counter()
    subprocess.run(args, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, env=env)
    wall = time.perf_counter() - t
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return cpu, wall


def pair(a: list[str], b: list[str], env: dict, runs: int) -> tuple[float, float, float, float]:
    """Median CPU and wall ratios A/B over `runs` interleaved pairs (after one warm-up each),
    and A's and B's median CPU seconds."""
    _child_time(a, env)
    _child_time(b, env)
    cpu_r, wall_r, cpu_a, cpu_b = [], [], [], []
    for _ in range(runs):
        ca, wa = _child_time(a, env)
        cb, wb = _child_time(b, env)
        cpu_r.append(ca / cb)
        wall_r.append(wa / wb)
        cpu_a.append(ca)
        cpu_b.append(cb)
    return (statistics.median(cpu_r), statistics.median(wall_r), statistics.median(cpu_a),
            statistics.median(cpu_b))


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--runs", type=int, default=9, help="pairs per small comparison (default 9)")
    ap.add_argument("--big-runs", type=int, default=3, help="pairs per 100k comparison (default 3)")
    ap.add_argument("--big", type=int, default=100_000, help="items in the big ledger (default 100000)")
    ap.add_argument("--skip-big", action="store_true", help="start-up pairs only")
    args = ap.parse_args(argv)

    py = sys.executable
    src = HERE.parent.parent / "src"
    with tempfile.TemporaryDirectory() as tmp:
        env = dict(os.environ, PYTHONPATH=str(src), PYTHONPYCACHEPREFIX=str(Path(tmp) / "pyc"))
        env.pop("PYTHONDONTWRITEBYTECODE", None)
        tiny = Path(tmp) / "tiny.toml"
        write_ledger(tiny, 10, seed=1)
        sy = [py, "-m", "steelyard"]
        numpy = [py, "-c", "import numpy"]
        rows = [("rollup tiny.toml / import numpy", sy + ["rollup", str(tiny)], numpy, 1.5, args.runs),
                ("--help / import numpy", sy + ["--help"], numpy, 1.2, args.runs)]
        if not args.skip_big:
            big = Path(tmp) / "big.toml"
            write_ledger(big, args.big, seed=1)
            json_ = sy + ["rollup", str(big), "--json"]
            rows += [(f"rollup {args.big:,} text / --json", sy + ["rollup", str(big)], json_, 1.1, args.big_runs),
                     (f"export {args.big:,} --csv / rollup --json",
                      sy + ["export", str(big), "--csv", str(Path(tmp) / "out.csv")], json_, 1.0, args.big_runs),
                     (f"export {args.big:,} --json / rollup --json",
                      sy + ["export", str(big), "--json", str(Path(tmp) / "out.json")], json_, None, args.big_runs)]
        print(f"{'pair':44s} {'cpu A/B':>8s} {'wall A/B':>9s} {'A cpu s':>8s} {'B cpu s':>8s}  goal")
        for name, a, b, goal, runs in rows:
            cpu, wall, ca, cb = pair(a, b, env, runs)
            print(f"{name:44s} {cpu:8.2f} {wall:9.2f} {ca:8.3f} {cb:8.3f}  {'' if goal is None else f'<= {goal}'}",
                  flush=True)
    return 0


if __name__ == "__main__":
    sys.exit(main())
