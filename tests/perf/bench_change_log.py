"""Writing a long change log: the compact [[change]] entries against the form written before.

    python tests/perf/bench_change_log.py [N]      (default 20,000 entries)

One process. N edits of one item's mass (Δ values with float noise, one
envelope margin undefined, as a real log has) are entered in a History with
their effects given, so no roll-up is timed. Timed, best of three:

- before: each entry as a table the way it was written until now (all digits,
  nan for undefined margins, `[change.before]` / `[change.after]` sub-tables),
  through toml_write.tables;
- compact: `change_to_table` (6 significant figures, undefined left out) and
  the entries as written by io.ledger.write (tables inline).

Printed: seconds, the ratio compact / before, and lines and bytes per entry.
Nothing is asserted.
"""

from __future__ import annotations

import math
import sys
import time

from steelyard.core.document.model import Item, Ledger
from steelyard.core.history.changes import Effect, History, change_to_table
from steelyard.io.ledger.toml_write import tables
from steelyard.io.ledger.write import change_lines


def old_table(c) -> dict:
    """An entry as written before the compact form (kept here as the baseline)."""
    t = {"time": c.time, "author": c.author, "action": c.action, "item": c.item, "summary": c.summary,
         "d_mass_kg": float(c.effect.d_mass), "d_cg_m": [float(x) for x in c.effect.d_cg],
         "d_margin_m": {n: (math.nan if m is None else float(m)) for n, m in c.effect.d_margin}}
    t["before"], t["after"] = dict(c.before), dict(c.after)
    return t


def best(fn, rounds: int = 3) -> float:
    out = math.inf
    for _ in range(rounds):
        t0 = time.perf_counter()
        fn()
        out = min(out, time.perf_counter() - t0)
    return out


def main(n: int) -> None:
    ledger = Ledger((Item("part", 0.1, (1.0, 0.0, 0.0)),))
    h = History(ledger)
    for k in range(n):
        m0, m1 = 0.1 + 0.2 * k, 0.1 + 0.2 * (k + 1)
        h.apply(ledger, action="edit", item="part", summary=f"edit part mass ({k})", loadout=None, author="ana",
                now="2026-05-04T09:12:33Z", before={"id": "part", "mass_kg": m0}, after={"id": "part", "mass_kg": m1},
                effect=Effect(m1 - m0, (1e-3 / 3, 0.0, -2e-4 / 7), (("normal", (m1 - m0) / 3), ("heavy", None))))
    log = h.log
    old_text: list[str] = []
    new_text: list[str] = []

    def before() -> None:
        old_text[:] = [tables({"change": [old_table(c) for c in log]})]

    def compact() -> None:
        new_text[:] = ["\n\n".join("\n".join(change_lines(change_to_table(c))) for c in log) + "\n"]

    t_old, t_new = best(before), best(compact)
    print(f"{n:,} entries: before {t_old:.3f} s, compact {t_new:.3f} s, ratio compact/before {t_new / t_old:.2f}")
    for name, text in (("before", old_text[0]), ("compact", new_text[0])):
        lines = text.count("\n")
        print(f"  {name:8s} {lines / n:5.1f} lines and {len(text.encode()) / n:6.1f} bytes per entry")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 20_000)
