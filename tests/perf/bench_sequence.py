"""Benchmark: a 10,000-state burn sequence checked against three CG envelopes.

The trainer fixture gets a sequence of two burns (5,000 samples each) and a
third, concave envelope. Timed, best of several runs:

- steelyard: building the path (`build_path`: the loadout's roll-up without
  the tanks, the tanks' incremental mass and moment, exact edge crossings)
  plus one `evaluate` per envelope, then the whole `check_ledger`;
- bare numpy: the same path from precomputed fills as two matrix products,
  and one states × edges crossing array per envelope, summed: the least any
  vectorised code could do;
- pure Python: per state, mass and CG summed over every item, then inside and
  chord per envelope with a plain loop over the edges.

A second run puts the same sequence on a synthetic 100,000-item ledger: the
path work stays proportional to states × changing items, never to states × n.
Not collected by pytest.

    python tests/perf/bench_sequence.py
"""

from __future__ import annotations

import sys
import time
import tomllib
from pathlib import Path

import numpy as np

from steelyard.core.limits.checks import check_ledger
from steelyard.core.limits.rules import envelope_specs
from steelyard.core.loading.sequence_path import build_path
from steelyard.core.limits.status import geometry
from steelyard.io.ledger.read import ledger_from_data

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(Path(__file__).resolve().parent))

EXTRA = '''
[[envelope]]
name = "notched"
axis = "x"
points = [[124.0, 1150.0], [124.0, 1760.0], [128.0, 1760.0], [129.0, 1600.0], [130.0, 1760.0],
          [132.5, 1760.0], [133.0, 1400.0], [131.0, 1150.0]]

[[sequence]]
name = "long-burn"
loadout = "two-up-full-fuel"
samples = 5000

[[sequence.step]]
burn = { fuel-l = "12 gal" }

[[sequence.step]]
burn = { fuel-r = "12 gal" }
'''


def best(fn, repeat: int = 15) -> float:
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return min(times)


def bare_numpy(mass0, moment0, full, pos, fill, polys):
    """Path from fills in two products, then the states × edges crossings of each envelope."""
    mass = mass0 + fill @ full
    cg = (moment0 + fill @ (full * pos)) / mass
    total = 0.0
    for p in polys:
        x0, y0 = p[:, 0], p[:, 1]
        x1, y1 = np.roll(x0, -1), np.roll(y0, -1)
        with np.errstate(divide="ignore", invalid="ignore"):
            total += np.nansum(x0 + (mass[:, None] - y0) / (y1 - y0) * (x1 - x0) - cg[:, None])
    return total


def python_loop(items, fills_py, rows, polys):
    """Per state: Σ m, Σ m·x over all items; then per envelope the chord by a loop over edges."""
    edges = [[(tuple(a), tuple(b)) for a, b in zip(p.tolist(), np.roll(p, -1, axis=0).tolist())] for p in polys]
    flags = 0
    for f in fills_py:
        w = mom = 0.0
        fr = dict(zip(rows, f))
        for i, (m, x) in enumerate(items):
            k = fr.get(i, 1.0)
            w += m * k
            mom += m * k * x
        c = mom / w
        for es in edges:
            xs = sorted(ax + (w - ay) / (by - ay) * (bx - ax) for (ax, ay), (bx, by) in es
                        if min(ay, by) <= w < max(ay, by))
            flags += any(xs[i] <= c <= xs[i + 1] for i in range(0, len(xs) - 1, 2))
    return flags


def run(label: str, text: str, python_too: bool) -> None:
    led = ledger_from_data(tomllib.loads(text), source=label)
    envs = [("xyz".index(e.axis), np.asarray(e.points)) for e in envelope_specs(led)]
    geoms = [(e.axis, geometry(e.points, e.name)) for e in envelope_specs(led)]
    path = build_path(led, "long-burn")

    def ours():
        q = build_path(led, "long-burn", envs)
        return [g.evaluate(q.cg[:, "xyz".index(a)], q.mass) for a, g in geoms]

    t_path = best(lambda: build_path(led, "long-burn", envs))
    t_ours = best(ours)
    t_check = best(lambda: check_ledger(led), repeat=5)

    a = led.arrays
    rows = [led.index[i] for i in path.items]
    full = a.unit_mass[rows] * a.quantity[rows]
    pos = a.cg[rows, 0]
    sel = path.fill[0]  # the other items do not change along the path: fold them into constants
    rest_mass = float(path.mass[0] - sel @ full)
    rest_moment = float(path.mass[0] * path.cg[0, 0] - sel @ (full * pos))
    polys = [v for _, v in envs]
    t_bare = best(lambda: bare_numpy(rest_mass, rest_moment, full, pos, path.fill, polys))

    n_env = len(envs)
    print(f"{label}: {len(led.items):,} items, {len(path):,} states x {n_env} envelopes")
    print(f"  build_path                 {t_path * 1e3:8.2f} ms   (one O(n) roll-up + k changing items)")
    print(f"  build_path + evaluate x{n_env}   {t_ours * 1e3:8.2f} ms   / bare numpy = {t_ours / t_bare:6.1f}x")
    print(f"  check_ledger (everything)  {t_check * 1e3:8.2f} ms   (every loadout, zero fuel, sequence, limit)")
    print(f"  bare numpy pass            {t_bare * 1e3:8.2f} ms")
    if python_too:
        from steelyard.core.loading.loadout import fill_fractions

        base = fill_fractions(led, path.loadout)
        items = [(float(m * q * (1.0 if i in rows else base[i])), float(x))
                 for i, (m, q, x) in enumerate(zip(a.unit_mass, a.quantity, a.cg[:, 0]))]
        t0 = time.perf_counter()
        python_loop(items, path.fill.tolist(), rows, polys)
        t_py = time.perf_counter() - t0
        print(f"  pure-Python loop           {t_py * 1e3:8.2f} ms   Python / steelyard = {t_py / t_ours:6.1f}x")


def main() -> None:
    trainer = (ROOT / "fixtures" / "trainer.toml").read_text() + EXTRA
    run("trainer", trainer, python_too=True)

    from make_ledger import ledger_text

    # the synthetic ledger gets the trainer's two tanks, a loadout with them full and the same sequence
    tanks = trainer[trainer.index('[[item]]\nid = "fuel-l"'):trainer.index('[[item]]\nid = "baggage"')]
    big = (ledger_text(100_000, 7) + "\n" + tanks
           + '\n[[loadout]]\nname = "two-up-full-fuel"\nbase = "full"\n[loadout.set]\nfuel-l = 1.0\nfuel-r = 1.0\n'
           + EXTRA.replace("[[124.0, 1150.0], [124.0, 1760.0]", "[[-1e4, 1.0], [-1e4, 1e9]")
           .replace("[131.0, 1150.0]]", "[1e4, 1.0]]")
           + '\n[[envelope]]\nname = "lateral"\naxis = "y"\npoints = [[-1e4, 1.0], [-1e4, 1e9], [1e4, 1e9], [1e4, 1.0]]\n')
    run("synthetic", big, python_too=False)


if __name__ == "__main__":
    main()
