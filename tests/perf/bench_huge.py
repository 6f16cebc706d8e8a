"""Huge ledgers: load time and peak memory of `steelyard rollup`, against bare TOML parsing.

    python tests/perf/bench_huge.py [--items 1000000] [--dir DIR] [--keep]

Writes an N-item ledger with make_ledger.py, then runs, each in a fresh child
process so its peak resident memory (ru_maxrss from os.wait4) is its own:

- baseline: `tomllib.load` of the file (the standard library's parser);
- `rtoml.load` of the file (the compiled parser the loader tries first);
- `steelyard rollup FILE`, stderr on a pseudo-terminal so the progress line
  is shown (and counted), stdout to /dev/null;
- an interpreter that only imports steelyard's CLI (the fixed overhead).

Prints times as ratios to tomllib and peak memory as a multiple of the file
size. Then the journal: the cost of an fsync'd append against an unsynced
one, and of turning an edit into a record on a 100,000-item ledger.
"""

from __future__ import annotations

import argparse
import os
import pty
import resource
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
import make_ledger  # noqa: E402

MB = 1024 * 1024


def run_child(argv: list[str], *, pty_stderr: bool = False) -> tuple[float, int, int, bytes]:
    """(wall seconds, peak RSS bytes, exit status, stderr bytes) of one child process."""
    master = slave = None
    if pty_stderr:
        master, slave = pty.openpty()
    t0 = time.perf_counter()
    proc = subprocess.Popen(argv, stdout=subprocess.DEVNULL, stderr=slave if pty_stderr else subprocess.PIPE)
    chunks: list[bytes] = []

    def pump():
        fd = master if pty_stderr else proc.stderr.fileno()
        while True:
            try:
                data = os.read(fd, 65536)
            except OSError:
                break
            if not data:
                break
            chunks.append(data)

    if pty_stderr:
        os.close(slave)
    reader = threading.Thread(target=pump, daemon=True)
    reader.start()
    _, status, usage = os.wait4(proc.pid, 0)
    wall = time.perf_counter() - t0
    reader.join(timeout=5)
    if master is not None:
        os.close(master)
    proc.returncode = os.waitstatus_to_exitcode(status)
    return wall, usage.ru_maxrss * 1024, proc.returncode, b"".join(chunks)  # ru_maxrss is KiB on Linux


def bench_load(path: Path) -> None:
    size = path.stat().st_size
    py = sys.executable
    runs = {
        "tomllib.load": [py, "-c", "import sys, tomllib; tomllib.load(open(sys.argv[1], 'rb'))", str(path)],
        "rtoml.load": [py, "-c", "import sys, rtoml; rtoml.load(open(sys.argv[1], encoding='utf-8'))", str(path)],
        "imports only": [py, "-c", "import steelyard.cli.main, steelyard.io.ledger.file, numpy, pint"],
        "steelyard rollup": [py, "-m", "steelyard", "rollup", str(path)],
    }
    results = {}
    for name, argv in runs.items():
        wall, rss, code, err = run_child(argv, pty_stderr=(name == "steelyard rollup"))
        if code != 0:
            raise SystemExit(f"{name} failed with exit {code}: {err[-500:]!r}")
        results[name] = (wall, rss, err)
    base = results["tomllib.load"][0]
    print(f"file: {size:,} bytes ({size / MB:.1f} MiB)")
    print(f"{'run':18s} {'wall s':>8s} {'÷ tomllib':>10s} {'peak RSS MiB':>13s} {'× file size':>12s}")
    for name, (wall, rss, _) in results.items():
        print(f"{name:18s} {wall:8.2f} {wall / base:10.2f} {rss / MB:13.0f} {rss / size:12.2f}")
    floor = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
    print(f"(children start as a copy of this process, {floor / MB:.0f} MiB: smaller figures are not measurable)")
    fixed = results["imports only"][1]
    rss = results["steelyard rollup"][1]
    print(f"steelyard rollup above the fixed {fixed / MB:.0f} MiB of imports: {(rss - fixed) / size:.2f} × file size")
    err = results["steelyard rollup"][2].decode("utf-8", "replace")
    frames = [f for f in err.split("\r") if "loading" in f]
    phases = sorted({f.split(":")[-1].split("%")[0].strip(" |/-\\0123456789") for f in frames} - {""})
    print(f"progress on the terminal: {len(frames)} updates, phases: {', '.join(phases) or 'none'}")
    if frames:
        print(f"  last update: {frames[-1].strip()!r}")


def bench_journal(folder: Path) -> None:
    import steelyard.io.durability.journal as J
    from steelyard.io.ledger.file import open_ledger

    ledger_path = folder / "journal-bench.toml"
    make_ledger.write_ledger(ledger_path, 100_000, seed=3)
    loaded = open_ledger(ledger_path)
    led = loaded.ledger
    n = 2000
    records = [J.item_record(led.items[k].evolve(mass=float(k))) for k in range(n)]

    def appends() -> float:
        with J.Journal.open(ledger_path, loaded.sha256) as journal:
            t = time.perf_counter()
            for r in records:
                journal.append(r)
            dt = (time.perf_counter() - t) / n
            journal.close(discard=True)
        return dt

    synced = appends()
    real = getattr(os, "fdatasync", None), os.fsync
    os.fdatasync = os.fsync = lambda fd: None  # the same work without waiting for the disk
    try:
        unsynced = appends()
    finally:
        if real[0] is not None:
            os.fdatasync = real[0]
        os.fsync = real[1]
    print(f"journal append ({n} item records): {synced * 1e3:.3f} ms fsync'd, {unsynced * 1e3:.3f} ms unsynced "
          f"(ratio {synced / unsynced:.1f})")
    it = led.items[50_000]
    new = led.with_item(it.evolve(mass=it.mass + 1))
    t = time.perf_counter()
    for _ in range(20):
        rec = J.edit_record(led, new)
    diff = (time.perf_counter() - t) / 20
    t = time.perf_counter()
    J.replay(led, [rec] * 200)
    rep = (time.perf_counter() - t) / 200
    print(f"edit_record on 100,000 items: {diff * 1e3:.2f} ms per edit; replay: {rep * 1e3:.3f} ms per record "
          f"(200 records)")


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--items", type=int, default=1_000_000)
    ap.add_argument("--dir", help="where to write the file (default: a temporary folder)")
    ap.add_argument("--keep", action="store_true", help="keep the generated file")
    ap.add_argument("--skip-load", action="store_true", help="only the journal part")
    args = ap.parse_args(argv)
    folder = Path(args.dir or tempfile.mkdtemp(prefix="steelyard-huge-"))
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / f"huge-{args.items}.toml"
    try:
        if not args.skip_load:
            t = time.perf_counter()
            # In a child: building the text here would inflate this process, and every child
            # forked from it starts with (and reports in ru_maxrss) this process's resident pages.
            subprocess.run([sys.executable, str(HERE / "make_ledger.py"), str(args.items), str(path)], check=True,
                           stdout=subprocess.DEVNULL)
            print(f"generated {args.items:,} items in {time.perf_counter() - t:.1f} s")
            bench_load(path)
        bench_journal(folder)
    finally:
        if not args.keep:
            path.unlink(missing_ok=True)
            (folder / "journal-bench.toml").unlink(missing_ok=True)
    print(f"(this process peaked at {resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024:.0f} MiB)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
