"""Reopening an unchanged ledger: the read cache (io.ledger.cache) against a fresh read of the same file.

Prints ratios, each pair taken in the same run:
- open_ledger alone, timed inside a fresh process each time: a hit / a fresh parse, and a miss that writes the entry / a fresh parse
  (the price the first open pays for the second);
- whole `steelyard rollup --json` processes (interpreter, imports and the roll-up included), CPU and
  wall: the hit / `--no-cache`, runs alternating so the machine's drift touches both alike;
- for scale, `python -c "import numpy"` / `--no-cache`.
The cache lives in a temporary folder (STEELYARD_CACHE_DIR); the user's own is never touched.

Run: python tests/perf/bench_reopen.py [N]        (default 100,000 items)
Whole commands also: farm-bench --vs 'python -m steelyard rollup --json --no-cache BIG' -- \
                     python -m steelyard rollup --json BIG
"""

from __future__ import annotations

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


_OPEN = ("import sys, time; from steelyard.io.ledger.file import open_ledger; "
         "c, w = time.process_time(), time.perf_counter(); kept = open_ledger(sys.argv[1], cache=sys.argv[2] == '1'); "
         "print(time.process_time() - c, time.perf_counter() - w)")


def _timed(path: Path, cache: bool) -> tuple[float, float]:
    """(CPU, wall) seconds of open_ledger alone, in a fresh process (as a command or the editor opens)."""
    out = subprocess.run([sys.executable, "-c", _OPEN, str(path), "1" if cache else "0"], check=True,
                         capture_output=True, text=True).stdout.split()
    return float(out[0]), float(out[1])


def _process(args: list[str]) -> tuple[float, float]:
    """(CPU, wall) seconds of one child process."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    w = time.perf_counter()
    subprocess.run(args, check=True, stdout=subprocess.DEVNULL)
    wall = time.perf_counter() - w
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    return (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime), wall


def main(n: int = 100_000, repeat: int = 3) -> None:
    with tempfile.TemporaryDirectory() as tmp:
        os.environ["STEELYARD_CACHE_DIR"] = os.path.join(tmp, "cache")
        os.environ.pop("STEELYARD_NO_CACHE", None)
        path = Path(tmp) / "big.toml"
        write_ledger(path, n, seed=1)
        from steelyard.io.ledger import cache

        fresh, miss, hit = [], [], []
        for _ in range(repeat):
            fresh.append(_timed(path, False))
            for e in Path(os.environ["STEELYARD_CACHE_DIR"]).glob("*"):
                e.unlink()
            miss.append(_timed(path, True))
            hit.append(_timed(path, True))
        entry = cache.entry_path(str(path))
        med = lambda runs, i: statistics.median(r[i] for r in runs)  # noqa: E731
        print(f"file: {n:,} items, {path.stat().st_size / 1e6:.1f} MB; cache entry {entry.stat().st_size / 1e6:.1f} MB")
        print(f"open_ledger fresh parse        cpu {med(fresh, 0):6.2f} s  wall {med(fresh, 1):6.2f} s")
        print(f"open_ledger miss (writes)      cpu {med(miss, 0):6.2f} s  wall {med(miss, 1):6.2f} s   "
              f"miss/fresh cpu = {med(miss, 0) / med(fresh, 0):.2f}")
        print(f"open_ledger hit                cpu {med(hit, 0):6.2f} s  wall {med(hit, 1):6.2f} s   "
              f"hit/fresh cpu = {med(hit, 0) / med(fresh, 0):.3f}  wall = {med(hit, 1) / med(fresh, 1):.3f}  "
              "(goal <= 0.1)")

        py = sys.executable
        cmd = [py, "-m", "steelyard", "rollup", "--json", str(path)]
        numpy = [py, "-c", "import numpy"]
        _process(cmd)  # the entry is there
        pairs = [(_process(cmd), _process([*cmd[:3], "--no-cache", *cmd[3:]]), _process(numpy))
                 for _ in range(repeat)]
        cpu = statistics.median(a[0] / b[0] for a, b, _ in pairs)
        wall = statistics.median(a[1] / b[1] for a, b, _ in pairs)
        base = statistics.median(c[0] / b[0] for _, b, c in pairs)
        print(f"rollup --json process: hit cpu {statistics.median(a[0] for a, _, _ in pairs):.2f} s, "
              f"--no-cache cpu {statistics.median(b[0] for _, b, _ in pairs):.2f} s")
        print(f"rollup --json process hit / --no-cache   cpu = {cpu:.3f}  wall = {wall:.3f}")
        print(f"python -c 'import numpy' / --no-cache   cpu = {base:.3f}  (the floor of any command)")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 100_000)
