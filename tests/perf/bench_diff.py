"""Benchmark: diff of two 100,000-item ledgers against the time to load both.

A is written by make_ledger.py; B is a perturbed copy (about 1 % of masses
changed, 0.5 % of CGs moved, 0.1 % renamed, 0.2 % of fixed items removed,
200 items added, and every item in a shuffled order). Prints, for runs in
this one process:

- load both: `open_ledger` of A and B (the baseline, best of the repeats);
- compare: `carried` of both sides + `compare_carried` + the JSON record;
- ratio (load both + compare) / load both, the figure the issue bounds by 1.2;
- the whole `steelyard diff A B --json` command (stdout to a buffer) / load both.

Times are process CPU time (best of the repeats): the work is single-threaded,
and CPU time stays steady when other jobs share the machine; wall time is
printed too.

Not collected by pytest.

    python tests/perf/bench_diff.py [N] [--seed S] [--repeat R]
"""

from __future__ import annotations

import argparse
import contextlib
import gc
import io
import os
import random
import re
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

from make_ledger import ledger_text  # noqa: E402

from steelyard.cli.main import main as cli_main  # noqa: E402
from steelyard.core.history.diff import carried, compare_carried  # noqa: E402
from steelyard.io.exchange.diff_json import diff_record  # noqa: E402
from steelyard.io.ledger.file import open_ledger  # noqa: E402

_MASS = re.compile(r"^mass = (\S+)$", re.M)
_CG = re.compile(r"^cg = \[(\S+), ", re.M)
_NAME = re.compile(r'^name = "([^"]*)"$', re.M)


def perturb(text: str, seed: int) -> tuple[str, dict]:
    """B's text from A's: edits on item blocks, then the blocks shuffled."""
    rng = random.Random(seed)
    head, rest = text.split("\n[[item]]\n", 1)
    body, tail = rest.split("\n[[loadout]]\n", 1)
    blocks = body.split("\n[[item]]\n")
    counts = dict(mass=0, cg=0, name=0, removed=0, added=0)
    out = []
    for b in blocks:
        r = rng.random()
        if r < 0.002 and "variable = true" not in b:
            counts["removed"] += 1
            continue
        if r < 0.012:
            b = _MASS.sub(lambda m: f"mass = {float(m.group(1)) * 1.01:.6g}", b, count=1)
            counts["mass"] += 1
        elif r < 0.017:
            b = _CG.sub(lambda m: f"cg = [{float(m.group(1)) + 2.5:.3f}, ", b, count=1)
            counts["cg"] += 1
        elif r < 0.018:
            b = _NAME.sub(lambda m: f'name = "{m.group(1)} (rev B)"', b, count=1)
            counts["name"] += 1
        out.append(b.rstrip("\n") + "\n")
    for k in range(200):
        out.append(f'id = "added-{k:04d}"\nname = "Added part {k}"\ngroup = "payload/added"\n'
                   f"mass = {1.0 + k % 7:.1f}\ncg = [{100.0 + k:.1f}, 0.0, 10.0]\n")
        counts["added"] += 1
    rng.shuffle(out)
    return head + "\n[[item]]\n" + "\n[[item]]\n".join(out) + "\n[[loadout]]\n" + tail, counts


def best(fn, repeat: int) -> tuple[float, object]:
    """Least CPU time of `repeat` runs (single-threaded work: steadier than wall time on a busy machine)."""
    times, value = [], None
    for _ in range(repeat):
        value = None  # the previous run's ledgers are freed before the next one is timed
        gc.collect()
        t, w = time.process_time(), time.perf_counter()
        value = fn()
        times.append(time.process_time() - t)
        WALL.append(time.perf_counter() - w)
    return min(times), value


WALL: list[float] = []


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser()
    ap.add_argument("n", nargs="?", type=int, default=100_000)
    ap.add_argument("--seed", type=int, default=7)
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args(argv)
    with tempfile.TemporaryDirectory() as tmp:
        pa, pb = os.path.join(tmp, "a.toml"), os.path.join(tmp, "b.toml")
        text = ledger_text(args.n, args.seed)
        Path(pa).write_text(text)
        text_b, counts = perturb(text, args.seed + 1)
        Path(pb).write_text(text_b)

        t_load, (la, lb) = best(lambda: (open_ledger(pa), open_ledger(pb)), args.repeat)

        def compare():
            d = compare_carried(carried(la.ledger, None), carried(lb.ledger, None))
            return d, diff_record(d)

        t_cmp, (d, record) = best(compare, args.repeat)
        t_cmp_lo, _ = best(lambda: len(compare_carried(carried(la.ledger, "full"),
                                                       carried(lb.ledger, "partial")).changed), args.repeat)

        summary = (len(d.b.ids), len(d.added), len(d.removed), len(d.changed))
        del la, lb, d, record
        gc.collect()  # the command runs with no other ledger alive, as it would on its own

        def command():
            with contextlib.redirect_stdout(io.StringIO()):
                return cli_main(["diff", pa, pb, "--json"])

        t_cli, rc = best(command, args.repeat)

    n_b, n_added, n_removed, n_changed = summary
    print(f"items: A {args.n:,}, B {n_b:,}; perturbed: {counts}")
    print(f"found: {n_added} added, {n_removed} removed, {n_changed} changed; exit {rc}")
    print("times are process CPU seconds, best of the repeats")
    print(f"load both (baseline)          {t_load:8.3f} s")
    print(f"compare + JSON record         {t_cmp:8.3f} s   ({t_cmp / t_load:.3f} of load both)")
    print(f"compare A:full vs B:partial   {t_cmp_lo:8.3f} s   ({t_cmp_lo / t_load:.3f} of load both)")
    print(f"(load both + compare) / load both = {(t_load + t_cmp) / t_load:.3f}x   (bound 1.2x)")
    print(f"whole 'steelyard diff --json' / load both = {t_cli / t_load:.3f}x")
    r = args.repeat
    print(f"wall clock, best of {r}: load both {min(WALL[:r]):.3f} s, compare {min(WALL[r:2 * r]):.3f} s, "
          f"command {min(WALL[3 * r:]):.3f} s")
    return 0


if __name__ == "__main__":
    sys.exit(main())
