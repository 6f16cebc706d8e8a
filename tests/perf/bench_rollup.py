"""Roll-up speed: 1,000,000 items, against two baselines in the same process.

- a straightforward pure-Python loop over the same items (two passes, same maths);
- one bare numpy pass over the same arrays (a single reduction of each input array).

Run: python tests/perf/bench_rollup.py [N]. Prints ratios; asserts nothing.
"""

from __future__ import annotations

import sys
import time

import numpy as np

from steelyard.core.physics.rollup import rollup


def best(fn, repeat=5):
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return min(times)


def straightforward_loop(m, cg, own):
    """The textbook form per item: I += I_own + m(|d|² E − d dᵀ), 3x3 lists."""
    total = sum(m)
    c = [sum(m[i] * cg[i][k] for i in range(len(m))) / total for k in range(3)]
    inertia = [[0.0] * 3 for _ in range(3)]
    for i in range(len(m)):
        d = [cg[i][k] - c[k] for k in range(3)]
        dd = d[0] * d[0] + d[1] * d[1] + d[2] * d[2]
        for j in range(3):
            for k in range(3):
                inertia[j][k] += own[i][j][k] + m[i] * ((dd if j == k else 0.0) - d[j] * d[k])
    return inertia


def python_loop(m, cg, own):
    """A hand-tuned pure-Python loop (scalars inlined): the fastest plain Python we found."""
    total = 0.0
    mx = my = mz = 0.0
    for i in range(len(m)):
        total += m[i]
        mx += m[i] * cg[i][0]
        my += m[i] * cg[i][1]
        mz += m[i] * cg[i][2]
    c = (mx / total, my / total, mz / total)
    s = [[0.0] * 3 for _ in range(3)]
    o = [[0.0] * 3 for _ in range(3)]
    for i in range(len(m)):
        d = (cg[i][0] - c[0], cg[i][1] - c[1], cg[i][2] - c[2])
        for j in range(3):
            for k in range(3):
                s[j][k] += m[i] * d[j] * d[k]
                o[j][k] += own[i][j][k]
    tr = s[0][0] + s[1][1] + s[2][2]
    return [[o[j][k] + (tr if j == k else 0.0) - s[j][k] for k in range(3)] for j in range(3)]


def main(n: int = 1_000_000) -> None:
    rng = np.random.default_rng(0)
    m = rng.uniform(0.1, 50.0, n)
    cg = np.asfortranarray(rng.normal(3.0, 1.0, (n, 3)))  # the layout ledgers store
    own = np.zeros((n, 3, 3))
    own[:, [0, 1, 2], [0, 1, 2]] = rng.uniform(0, 1, (n, 3))
    t_ours = best(lambda: rollup(m, cg, own))
    t_numpy = best(lambda: (m.sum(), cg.sum(axis=0), own.sum(axis=0)))
    k = 100_000  # the pure-Python loop is timed on a slice and scaled (it is linear)
    ml, cl, ol = m[:k].tolist(), cg[:k].tolist(), own[:k].tolist()
    t_py = best(lambda: python_loop(ml, cl, ol), repeat=1) * n / k
    t_plain = best(lambda: straightforward_loop(ml, cl, ol), repeat=1) * n / k
    print(f"items: {n:,}")
    print(f"steelyard roll-up        {t_ours * 1e3:9.1f} ms")
    print(f"bare numpy pass          {t_numpy * 1e3:9.1f} ms   ratio ours/numpy   = {t_ours / t_numpy:6.2f}  (goal <= 5)")
    print(f"straightforward Python   {t_plain * 1e3:9.1f} ms   ratio python/ours  = {t_plain / t_ours:6.1f}  (goal >= 100)")
    print(f"hand-tuned Python        {t_py * 1e3:9.1f} ms   ratio python/ours  = {t_py / t_ours:6.1f}")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 1_000_000)
