"""Benchmark: a 10,000-state fuel-burn path against three CG envelopes.

Prints the time of `evaluate` and its ratio to two baselines run in the same
process on the same arrays: a bare numpy pass (build the states × edges
crossing array and np.sum it, per envelope) and a pure-Python per-state loop
computing the same figures (inside, chord, margin, mass margin). Not collected by pytest.

    python tests/perf/bench_envelope.py
"""

from __future__ import annotations

import math
import time

import numpy as np

from steelyard.core.limits.envelope import EnvelopeGeometry, evaluate

# Invented envelopes (cg m, mass kg).
ENVELOPES = {
    "takeoff": [(2.70, 300.0), (2.70, 520.0), (2.95, 650.0), (3.20, 650.0), (3.20, 300.0)],
    "notched": [(2.70, 300.0), (2.70, 650.0), (2.90, 650.0), (2.95, 480.0), (3.02, 650.0),
                (3.20, 650.0), (3.25, 420.0), (3.05, 300.0)],
    "landing": [(2.75, 300.0), (2.75, 600.0), (3.15, 600.0), (3.15, 300.0)],
}
N = 10_000


def burn_path(n: int = N) -> tuple[np.ndarray, np.ndarray]:
    """Take-off 640 kg at CG 2.93 m; 180 kg of fuel at station 3.05 m burnt to empty."""
    w0, x0, s = 640.0, 2.93, 3.05
    burnt = np.linspace(0.0, 180.0, n)
    mass = w0 - burnt
    return x0 + (-burnt) * (s - x0) / mass, mass


def best(fn, repeat: int = 25) -> float:
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return min(times)


def bare_numpy(polys, cg, mass):
    total = 0.0
    for p in polys:
        x0, y0 = p[:, 0], p[:, 1]
        x1, y1 = np.roll(x0, -1), np.roll(y0, -1)
        with np.errstate(divide="ignore", invalid="ignore"):
            x = x0 + (mass[:, None] - y0) / (y1 - y0) * (x1 - x0)
            total += np.sum(x)
    return total


def _cut(edges, level, pos):
    """Pieces of the polygon on one line, half-open rule, in plain Python."""
    xs = []
    for (ax, ay), (bx, by) in edges:
        if min(ay, by) <= level < max(ay, by):
            xs.append(ax + (level - ay) / (by - ay) * (bx - ax))
    xs.sort()
    return [(xs[i], xs[i + 1]) for i in range(0, len(xs) - 1, 2)]


def python_loop(polys, cg, mass):
    """The same figures per state in plain Python: inside, chord, margin, mass margin."""
    out = []
    for p in polys:
        pts = [tuple(map(float, v)) for v in p]
        edges = list(zip(pts, pts[1:] + pts[:1]))
        swapped = [((ay, ax), (by, bx)) for (ax, ay), (bx, by) in edges]
        flags = []
        for c, m in zip(cg.tolist(), mass.tolist()):
            pieces = _cut(edges, m, c)
            inside, margin = False, math.nan
            if pieces:
                lo, hi = min(pieces, key=lambda q: max(q[0] - c, c - q[1], 0.0))
                inside = lo <= c <= hi
                margin = min(c - lo, hi - c)
            column = [q for q in _cut(swapped, c, m) if q[0] <= m]
            mass_margin = column[-1][1] - m if column else math.nan
            flags.append((inside, margin, mass_margin))
        out.append([f[0] for f in flags])
    return out


def main() -> None:
    cg, mass = burn_path()
    polys = [np.asarray(v, float) for v in ENVELOPES.values()]
    geoms = [EnvelopeGeometry.from_points(v) for v in ENVELOPES.values()]

    t_eval = best(lambda: [evaluate(p, cg, mass) for p in polys])
    t_prep = best(lambda: [g.evaluate(cg, mass) for g in geoms])
    t_bare = best(lambda: bare_numpy(polys, cg, mass))
    t0 = time.perf_counter()
    flags = python_loop(polys, cg, mass)
    t_py = time.perf_counter() - t0

    # sanity: the plain loop's inside test agrees away from the boundary tolerance
    agree = all(
        np.mean(np.asarray(f) == g.evaluate(cg, mass).inside) > 0.999 for f, g in zip(flags, geoms)
    )
    print(f"states {N:,} x {len(polys)} envelopes (inside, chord, margins, mass margin)")
    print(f"evaluate (points)      {t_eval * 1e3:8.2f} ms")
    print(f"evaluate (prepared)    {t_prep * 1e3:8.2f} ms")
    print(f"bare numpy n x k pass  {t_bare * 1e3:8.2f} ms   evaluate / bare numpy = {t_eval / t_bare:6.1f}x"
          f" (prepared {t_prep / t_bare:.1f}x)")
    print(f"pure-Python loop       {t_py * 1e3:8.2f} ms   Python loop / evaluate = {t_py / t_eval:6.1f}x"
          f" (prepared {t_py / t_prep:.1f}x)")
    print(f"inside agrees with the plain loop: {agree}")


if __name__ == "__main__":
    main()
