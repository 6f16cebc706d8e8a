"""`steelyard rollup` of a 100,000-item file against a bare tomllib.load.

The file (lb / in / lb*in**2, bare numbers) comes from make_ledger.py. Both
are timed as whole processes, so interpreter and import time count for the
program, as a user would see it. Also reports the compiled parser (rtoml)
alone, and the program forced onto tomllib.

Run: python tests/perf/bench_cli_rollup.py [N]
"""

from __future__ import annotations

import os
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

from make_ledger import write_ledger  # noqa: E402


def timed(args, env=None, repeat=3):
    best = float("inf")
    for _ in range(repeat):
        t = time.perf_counter()
        subprocess.run(args, check=True, stdout=subprocess.DEVNULL, env=env)
        best = min(best, time.perf_counter() - t)
    return best


def main(n: int = 100_000) -> None:
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "big.toml"
        write_ledger(path, n, seed=1)
        size = path.stat().st_size
        py = sys.executable
        t_toml = timed([py, "-c", f"import tomllib; tomllib.load(open({str(path)!r}, 'rb'))"])
        t_rtoml = timed([py, "-c", f"import rtoml; rtoml.load(open({str(path)!r}))"])
        t_cli = timed([py, "-m", "steelyard", "rollup", str(path), "--json"])
        env = dict(os.environ, STEELYARD_TOML="tomllib")
        t_cli_slow = timed([py, "-m", "steelyard", "rollup", str(path), "--json"], env=env)
        print(f"file: {n:,} items, {size / 1e6:.1f} MB")
        print(f"bare tomllib.load (process)      {t_toml:7.2f} s")
        print(f"bare rtoml.load (process)        {t_rtoml:7.2f} s")
        print(f"steelyard rollup --json          {t_cli:7.2f} s   ratio to tomllib = {t_cli / t_toml:5.2f}  (goal <= 2)")
        print(f"steelyard rollup, tomllib only   {t_cli_slow:7.2f} s   ratio to tomllib = {t_cli_slow / t_toml:5.2f}")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 100_000)
