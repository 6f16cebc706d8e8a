"""`trend` over a long history against loading each version in-process.

Builds a temporary repository (one `git fast-import`) where a 1,000-item
ledger (make_ledger.py, plus a whole-vehicle allocation) changes in each of
200 commits. The baseline is 200 x (open_ledger of that version from a file
+ roll-up), in this process; `trend_of` reads the same 200 versions through
one `git log` and one `git cat-file --batch`. Goal: ratio <= 1.3.

Run: python tests/perf/bench_trend.py [COMMITS] [ITEMS]
"""

from __future__ import annotations

import os
import re
import subprocess
import sys
import tempfile
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

from make_ledger import ledger_text  # noqa: E402

from steelyard.core.loading.loadout import resolve  # noqa: E402
from steelyard.core.physics.rollup import rollup_state  # noqa: E402
from steelyard.io.ledger.file import open_ledger  # noqa: E402
from steelyard.io.vcs.ledger_at import trend_of  # noqa: E402

_FIRST_MASS = re.compile(r"^mass = [0-9].*$", re.M)  # the first item's mass, not [units]


def versions(n_commits: int, n_items: int) -> list[str]:
    """The ledger text at each commit: the first item's mass changes every time."""
    base = ledger_text(n_items, seed=1) + '\n[[allocation]]\ngroup = ""\nmass = 100000\n'
    return [_FIRST_MASS.sub(f"mass = {1 + k / 1000:.4f}", base, count=1) for k in range(n_commits)]


def build_repo(root: Path, texts: list[str]) -> None:
    env = {k: v for k, v in os.environ.items() if not k.startswith("GIT_")}
    env.update(LC_ALL="C", GIT_CONFIG_NOSYSTEM="1", GIT_CONFIG_GLOBAL=os.devnull)
    subprocess.run(["git", "init", "-q", "-b", "main", str(root)], check=True, env=env)
    stream = []
    for k, text in enumerate(texts):
        data = text.encode()
        when = 1767225600 + 3600 * k  # 2026-01-01 plus k hours
        msg = f"version {k}".encode()
        stream += [b"commit refs/heads/main\n", f"mark :{k + 1}\n".encode(),
                   f"committer Bench <bench@example.invalid> {when} +0000\n".encode(),
                   f"data {len(msg)}\n".encode(), msg, b"\n"]
        if k:
            stream.append(f"from :{k}\n".encode())
        stream += [f"M 100644 inline ledger.toml\ndata {len(data)}\n".encode(), data, b"\n"]
    subprocess.run(["git", "-C", str(root), "fast-import", "--quiet"], input=b"".join(stream), check=True, env=env)
    subprocess.run(["git", "-C", str(root), "checkout", "-q", "main"], check=True, env=env)


def baseline(folder: Path, texts: list[str]) -> float:
    paths = []
    for k, text in enumerate(texts):
        p = folder / f"v{k:04d}.toml"
        p.write_text(text)
        paths.append(p)
    t = time.perf_counter()
    for p in paths:
        ledger = open_ledger(p).ledger
        rollup_state(resolve(ledger, None))
    return time.perf_counter() - t


def main(n_commits: int = 200, n_items: int = 1000) -> None:
    texts = versions(n_commits, n_items)
    with tempfile.TemporaryDirectory() as tmp:
        root = Path(tmp) / "repo"
        build_repo(root, texts)
        (Path(tmp) / "plain").mkdir()
        open_ledger(root / "ledger.toml")  # imports and first-use costs out of both timings
        t_base = best = float("inf")
        for _ in range(3):  # interleaved, best of three: the machine may be shared
            t_base = min(t_base, baseline(Path(tmp) / "plain", texts))
            t = time.perf_counter()
            trend = trend_of(str(root / "ledger.toml"))
            best = min(best, time.perf_counter() - t)
        assert len(trend.read) == n_commits, (len(trend.read), trend.skipped[:1])
        size = len(texts[0].encode()) / 1e3
        print(f"history: {n_commits} commits of a {n_items:,}-item ledger ({size:.0f} kB each)")
        print(f"baseline: {n_commits} x (open_ledger + roll-up) in-process   {t_base:7.2f} s")
        print(f"trend_of (one git log, one git cat-file --batch)         {best:7.2f} s")
        print(f"ratio = {best / t_base:.2f}  (goal <= 1.3)")


if __name__ == "__main__":
    main(*(int(a) for a in sys.argv[1:3]))
