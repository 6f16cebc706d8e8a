"""Huge ledgers: time and peak memory of `steelyard rollup --json`, against a bare TOML parse.

    python tests/perf/bench_huge.py [--items 100000 300000 1000000] [--with-tomllib] [--progress]
                                    [--dir DIR] [--keep] [--skip-journal]

Writes an N-item ledger with make_ledger.py (kept and reused with --dir and
--keep), then runs, each in a fresh child process so its peak resident memory
(ru_maxrss from os.wait4) is its own:

- baseline: `rtoml.load` of the file (the compiled parser steelyard uses);
- `steelyard rollup --json FILE`, stdout to /dev/null;
- an interpreter that only imports steelyard's CLI (the fixed overhead);
- with --with-tomllib: `tomllib.load`, and the roll-up with STEELYARD_TOML=tomllib;
- with --progress: `steelyard rollup FILE`, stderr on a pseudo-terminal, counting progress updates.

Prints times as ratios to `rtoml.load` and peak memory as a multiple of the
file size (goals, issue 16: roll-up <= 1.3 x rtoml.load, peak <= 13 x the file). Then the journal: the cost of an fsync'd append against an unsynced
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


def bench_load(path: Path, *, with_tomllib: bool = False, progress: bool = False) -> None:
    size = path.stat().st_size
    py = sys.executable
    runs = {
        "rtoml.load": [py, "-c", "import sys, rtoml; rtoml.load(open(sys.argv[1], encoding='utf-8'))", str(path)],
        "rollup --json": [py, "-m", "steelyard", "rollup", "--json", str(path)],
        "imports only": [py, "-c", "import steelyard.cli.main, steelyard.io.ledger.file, numpy, pint"],
    }
    if with_tomllib:
        runs["tomllib.load"] = [py, "-c", "import sys, tomllib; tomllib.load(open(sys.argv[1], 'rb'))", str(path)]
        runs["rollup, tomllib"] = [py, "-c", "import os, sys; os.environ['STEELYARD_TOML'] = 'tomllib'; "
                                   "from steelyard.cli.main import main; sys.exit(main(sys.argv[1:]))",
                                   "rollup", "--json", str(path)]
    if progress:
        runs["rollup on a tty"] = [py, "-m", "steelyard", "rollup", str(path)]
    results = {}
    for name, argv in runs.items():
        wall, rss, code, err = run_child(argv, pty_stderr=(name == "rollup on a tty"))
        if code != 0:
            raise SystemExit(f"{name} failed with exit {code}: {err[-500:]!r}")
        results[name] = (wall, rss, err)
    base = results["rtoml.load"][0]
    print(f"file: {size:,} bytes ({size / MB:.1f} MiB)")
    print(f"{'run':18s} {'wall s':>8s} {'÷ rtoml.load':>13s} {'peak RSS MiB':>13s} {'× file size':>12s}")
    for name, (wall, rss, _) in results.items():
        print(f"{name:18s} {wall:8.2f} {wall / base:13.2f} {rss / MB:13.0f} {rss / size:12.2f}")
    floor = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss * 1024
    print(f"(children start as a copy of this process, {floor / MB:.0f} MiB: smaller figures are not measurable)")
    wall, rss, _ = results["rollup --json"]
    print(f"GOAL rollup --json ÷ rtoml.load: {wall / base:.2f} (goal <= 1.3); peak RSS ÷ file size: "
          f"{rss / size:.2f} (goal <= 13)")
    if "rollup on a tty" in results:
        err = results["rollup on a tty"][2].decode("utf-8", "replace")
        frames = [f for f in err.split("\r") if "loading" in f]
        phases = sorted({f.split(":")[-1].split("%")[0].strip(" |/-\\0123456789") for f in frames} - {""})
        print(f"progress on the terminal: {len(frames)} updates, phases: {', '.join(phases) or 'none'}")


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
    ap.add_argument("--items", type=int, nargs="+", default=[1_000_000],
                    help="ledger sizes, each measured in turn (e.g. 100000 300000 1000000)")
    ap.add_argument("--dir", help="where to write the files (default: a temporary folder)")
    ap.add_argument("--keep", action="store_true", help="keep the generated files")
    ap.add_argument("--skip-load", action="store_true", help="only the journal part")
    ap.add_argument("--skip-journal", action="store_true", help="only the load part")
    ap.add_argument("--with-tomllib", action="store_true",
                    help="also tomllib.load and the roll-up with STEELYARD_TOML=tomllib (why rtoml is the default)")
    ap.add_argument("--progress", action="store_true", help="also the roll-up on a terminal, counting progress")
    args = ap.parse_args(argv)
    folder = Path(args.dir or tempfile.mkdtemp(prefix="steelyard-huge-"))
    folder.mkdir(parents=True, exist_ok=True)
    for n in ([] if args.skip_load else args.items):
        path = folder / f"huge-{n}.toml"
        try:
            t = time.perf_counter()
            # In a child: building the text here would inflate this process, and every child
            # forked from it starts with (and reports in ru_maxrss) this process's resident pages.
            if not path.exists():
                subprocess.run([sys.executable, str(HERE / "make_ledger.py"), str(n), str(path)], check=True,
                               stdout=subprocess.DEVNULL)
            print(f"\n== {n:,} items (file ready in {time.perf_counter() - t:.1f} s)")
            bench_load(path, with_tomllib=args.with_tomllib, progress=args.progress)
        finally:
            if not args.keep:
                path.unlink(missing_ok=True)
    if not args.skip_journal:
        try:
            bench_journal(folder)
        finally:
            if not args.keep:
                (folder / "journal-bench.toml").unlink(missing_ok=True)
    print(f"(this process peaked at {resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024:.0f} MiB)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
