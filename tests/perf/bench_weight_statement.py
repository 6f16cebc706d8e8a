"""A 1,000-group weight statement: the fixed-width layout (cli/render/weight_statement.py) against
the same rows in a rich Table (the earlier layout), and the number rule's cost against bare
f-strings of the same cells. Ratios from one process; nothing here is asserted.

Run: python tests/perf/bench_weight_statement.py [GROUPS]
"""

from __future__ import annotations

import io
import sys
import time
from pathlib import Path
from types import SimpleNamespace

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[2] / "src"))

from rich import box  # noqa: E402
from rich.console import Console  # noqa: E402
from rich.table import Table  # noqa: E402

from steelyard.cli.render.weight_statement import weight_statement  # noqa: E402
from steelyard.core.display import DisplayUnits  # noqa: E402
from steelyard.core.document.model import FileUnits  # noqa: E402
from steelyard.core.numbers import column  # noqa: E402


def best(fn, repeat=5):
    t = float("inf")
    for _ in range(repeat):
        s = time.perf_counter()
        fn()
        t = min(t, time.perf_counter() - s)
    return t


def main(n: int = 1000) -> None:
    rng = np.random.default_rng(1)
    st = [SimpleNamespace(path=f"assy-{k // 10}/sub-{k}", depth=k % 2, count=int(rng.integers(1, 200)),
                          mass=float(rng.uniform(0.01, 500)), cg=rng.uniform(-5, 10, 3)) for k in range(n)]
    mp = SimpleNamespace(mass=sum(g.mass for g in st), cg=np.array([1.0, 0.1, 0.5]))
    du = DisplayUnits.choose(FileUnits("lb", "in", "lb*in**2"), None)

    def ours():
        c = Console(file=io.StringIO(), width=120, highlight=False, markup=False)
        c.print(weight_statement(st, mp, du, 100_000, 120), no_wrap=True, overflow="crop")

    def table():
        c = Console(file=io.StringIO(), width=120, highlight=False, markup=False)
        t = Table(title="Weight statement by group", box=box.SIMPLE_HEAD, pad_edge=False)
        for h in ("group", "items", "mass", "%", "x", "y", "z", "moment"):
            t.add_column(h, justify="right", no_wrap=True)
        for g in st:
            t.add_row(g.path, str(g.count), f"{g.mass:,.1f}", "1.0", *(f"{v:,.2f}" for v in g.cg), "1")
        c.print(t)

    values = [du.m(g.mass) for g in st]
    rule = best(lambda: column(values, "mass", du.factor("mass")))
    bare = best(lambda: [f"{v:,.1f}" for v in values])
    t_ours, t_table = best(ours), best(table, repeat=2)
    print(f"{n} groups: fixed-width layout {t_ours * 1e3:.1f} ms, rich Table {t_table * 1e3:.1f} ms "
          f"(ratio {t_table / t_ours:.1f}x faster)")
    print(f"one column by the number rule {rule * 1e6:.0f} µs vs bare f-strings {bare * 1e6:.0f} µs "
          f"(ratio {rule / bare:.2f})")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 1000)
