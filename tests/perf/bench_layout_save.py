"""Saving a big ledger after one edit: keeping the file's layout against today's canonical rewrite.

    python tests/perf/bench_layout_save.py [N]      (default 100,000 items)

One process, one file from tests/perf/make_ledger.py (with its comment
header). The edit is one item's mass. Timed, best of three rounds each:

- canonical: `ledger_to_toml(new)` and the atomic write, what every save did
  before layout-preserving saves;
- layout: `save_ledger(path, new, loaded=...)`, which re-reads the file,
  checks its hash, edits the text in place (io.ledger.layout) and reads the
  result back once to prove it means the new ledger, then writes atomically;
  with the parts: planning the edit, and that read-back check;
- a save with no edit at all (the text is the file's own; no read-back).

The goal is layout <= 1.5 x canonical. Nothing is asserted: the numbers are
printed for docs/format.md.
"""

from __future__ import annotations

import os
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

from make_ledger import write_ledger  # noqa: E402

from steelyard.io.durability.atomic import write_atomic  # noqa: E402
from steelyard.io.ledger.file import open_ledger, save_ledger  # noqa: E402
from steelyard.io.ledger.layout import preserve  # noqa: E402
from steelyard.io.ledger.write import ledger_to_toml  # noqa: E402


def best(fn, rounds: int = 3) -> float:
    times = []
    for _ in range(rounds):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return min(times)


def main(n: int) -> int:
    with tempfile.TemporaryDirectory() as tmp:
        path = os.path.join(tmp, "big.toml")
        other = os.path.join(tmp, "canonical.toml")
        size = write_ledger(path, n)
        original = Path(path).read_bytes()
        loaded = open_ledger(path)
        led = loaded.ledger
        item = led.items[n // 2]
        new = led.with_item(item.evolve(mass=item.mass * 1.25))

        def canonical():
            write_atomic(other, ledger_to_toml(new).encode("utf-8"))

        def layout():
            Path(path).write_bytes(original)  # each round saves over the file as it was read
            save_ledger(path, new, loaded=loaded)

        def unchanged():
            Path(path).write_bytes(original)
            save_ledger(path, led, loaded=loaded)

        t_canon = best(canonical)
        t_layout = best(layout)
        t_same = best(unchanged)
        text = original.decode("utf-8")
        done = preserve(text, led, new)
        t_plan = best(lambda: preserve(text, led, led))  # planning alone: no edit, no read-back
        print(f"{n:,} items, {size / 1e6:.1f} MB; one item's mass edited")
        print(f"  canonical (ledger_to_toml + atomic write): {t_canon:7.2f} s")
        print(f"  layout-preserving save_ledger:             {t_layout:7.2f} s   ratio {t_layout / t_canon:.2f}"
              f"  (goal <= 1.5)")
        print(f"    of which the read-back check:            {done.check_seconds:7.2f} s  ({done.how})")
        print(f"    scanning and planning (no edit):         {t_plan:7.2f} s")
        print(f"  save with no edit (same bytes):            {t_same:7.2f} s   ratio {t_same / t_canon:.2f}")
        assert Path(path).read_bytes() == original
    return 0


if __name__ == "__main__":
    sys.exit(main(int(sys.argv[1]) if len(sys.argv) > 1 else 100_000))
