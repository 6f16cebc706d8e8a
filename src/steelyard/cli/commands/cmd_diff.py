"""`steelyard diff A B`: what changed between two ledgers, snapshots or loadouts.

Exit codes follow diff(1): 0 no differences (one line says so), 1 different,
2 bad input (one-line message). A side written `FILE:LOADOUT` is split at
its last ':' only when FILE is a file (or FILE@REV, a file as committed)
and LOADOUT names one of its loadouts, so paths that contain ':' still
work; `--a-loadout` and `--b-loadout` say it explicitly.
"""

from __future__ import annotations

import json
import os
import sys
from dataclasses import dataclass

NAME = "diff"
HELP = "compare two ledgers, snapshots or loadouts (FILE:LOADOUT) item by item; exit 0 same, 1 different"
DESCRIPTION = (
    "Compare A with B item by item (matched by id) as carried: items added, removed and changed "
    "field by field, the effect on mass, CG, inertia and each CG envelope, and the changed items "
    "ranked by how far each alone moves the CG; then envelopes, loadouts, limits, allocations, "
    "sequences and the [mac], [fuel], [growth], [weighing] and [user] tables by name, by meaning. "
    "A and B are ledger files, snapshots, or "
    "FILE:LOADOUT. Values equal after unit conversion are no difference. Exit 0: no differences; "
    "1: different; 2: bad input.")


def add_arguments(p) -> None:
    from steelyard.cli.unit_options import add_unit_options

    p.add_argument("a", metavar="A", help="ledger or snapshot file, or FILE:LOADOUT")
    p.add_argument("b", metavar="B", help="ledger or snapshot file, or FILE:LOADOUT")
    p.add_argument("--json", action="store_true", help="one JSON object on stdout, SI units")
    p.add_argument("--a-loadout", metavar="NAME", help="loadout of A (A is then taken whole as a path)")
    p.add_argument("--b-loadout", metavar="NAME", help="loadout of B (B is then taken whole as a path)")
    add_unit_options(p)
    p.add_argument("--max-items", metavar="N", type=int, default=50,
                   help="rows per item list in the report (default 50; 0 shows all)")
    p.add_argument("--allow-mismatch", action="store_true",
                   help="compare a snapshot that fails its hash or totals check anyway (warns on stderr)")


@dataclass
class Side:
    spec: str
    path: str
    loadout: str | None
    loaded: object  # LoadedLedger
    snapshot: object | None  # SnapshotInfo

    @property
    def label(self) -> str:
        if self.loadout is not None:
            return f"{self.path}:{self.loadout}"
        if self.snapshot is not None:
            what = f"loadout {self.snapshot.loadout}" if self.snapshot.loadout else "no loadout"
            return f"{self.path} (snapshot, {what})"
        return self.path

    def source(self) -> dict:
        snap = self.snapshot
        out = {"file": self.path, "loadout": self.loadout if snap is None else snap.loadout,
               "snapshot": snap is not None}
        if snap is not None:
            taken = snap.taken.isoformat() if hasattr(snap.taken, "isoformat") else snap.taken
            out.update(taken=None if taken is None else str(taken), author=snap.author,
                       content_sha256=snap.content_sha256)
        return out


class _Files:
    """Each file is read once, even when both sides name it; the second file's item tables that are
    byte-for-byte the first's are not parsed again (io.ledger.read_reuse)."""

    def __init__(self) -> None:
        from steelyard.io.ledger.read_reuse import ReadMemory

        self._cache: dict[str, object] = {}
        self.memory = ReadMemory(chain=False)

    def get(self, path: str):
        from steelyard.cli.loading import load_for_cli

        key = os.path.realpath(path)
        if key not in self._cache:
            self._cache[key] = load_for_cli(path, memory=self.memory)
            self._last = key
        return self._cache[key]

    def read_last(self, path: str) -> bool:
        """`path` was the last file read (the memory's `shared` rows are its rows)."""
        return getattr(self, "_last", None) == os.path.realpath(path)


def split_side(spec: str, explicit: str | None, option: str, files: _Files) -> tuple[str, str | None]:
    """(path, loadout) of one command-line side; see the module docstring for the rule."""
    from steelyard.core.errors import SteelyardError

    if explicit is not None or ":" not in spec:
        return spec, explicit
    from steelyard.io.vcs.revision import split_revision

    head, tail = spec.rsplit(":", 1)
    if not head or not tail or not (os.path.isfile(head) or split_revision(head) is not None):  # FILE@REV:LOADOUT
        return spec, None
    names = [lo.name for lo in files.get(head).ledger.loadouts]
    if tail in names:
        if os.path.exists(spec):
            raise SteelyardError(f"is both a file and {head!r} with loadout {tail!r}; "
                                 f"give the loadout with {option} to choose", file=spec)
        return head, tail
    if os.path.exists(spec):
        return spec, None
    known = ", ".join(repr(n) for n in names) or "none"
    raise SteelyardError(f"no loadout named {tail!r} (loadouts: {known})", file=head, field="loadout")


def load_side(spec: str, explicit: str | None, option: str, files: _Files, allow_mismatch: bool) -> Side:
    from steelyard.core.errors import SteelyardError
    from steelyard.io.ledger.snapshot import SnapshotMismatch, snapshot_info, verify_loaded
    from steelyard.cli.loading import check_loadout

    path, loadout = split_side(spec, explicit, option, files)
    loaded = files.get(path)
    info = snapshot_info(loaded.ledger, file=path)
    if info is not None:
        if loadout is not None:
            raise SteelyardError("is a snapshot: one configuration already, it has no loadouts", file=path,
                                 field="loadout")
        try:
            verify_loaded(loaded, file=path)
        except SnapshotMismatch as exc:
            if not allow_mismatch:
                raise SnapshotMismatch(f"{exc.message} (--allow-mismatch compares it anyway)", file=exc.file,
                                       subject=exc.subject, field=exc.field) from None
            from steelyard.cli.render.diff import safe

            print(safe(f"steelyard: warning: {exc}"), file=sys.stderr)
    else:
        check_loadout(loaded, loadout)
    return Side(spec, path, loadout, loaded, info)


def run(args) -> int:
    from steelyard.core.history.diff import carried, compare_carried
    from steelyard.core.errors import SteelyardError

    if args.max_items < 0:
        raise SteelyardError(f"must be 0 or more, got {args.max_items}", field="--max-items")
    files = _Files()
    sides = [load_side(spec, lo, opt, files, args.allow_mismatch)
             for spec, lo, opt in ((args.a, args.a_loadout, "--a-loadout"), (args.b, args.b_loadout, "--b-loadout"))]
    views = []
    for s in sides:
        try:
            views.append(carried(s.loaded.ledger, s.loadout))
        except SteelyardError as exc:
            raise exc.located(file=s.path)
    shared = files.memory.shared if files.read_last(sides[1].path) else None
    diff = compare_carried(*views, shared=shared)
    a, b = sides
    if args.json:
        from steelyard.io.exchange.diff_json import diff_record

        # one write: json.dump with an indent writes every token separately
        sys.stdout.write(json.dumps(diff_record(diff, a.source(), b.source()), indent=2, allow_nan=False) + "\n")
    elif diff.identical:
        from steelyard.cli.render.diff import safe

        n = len(diff.a.mass)
        print(safe(f"no differences: {a.label} and {b.label} carry the same {n:,} item{'s' if n != 1 else ''} "
                   "with the same values"))
    else:
        from steelyard.cli.render.diff import print_diff

        units_from = next((s.loaded.ledger.units for s in sides if s.snapshot is None), None)
        print_diff(diff, a.label, b.label, args.units, args.max_items, units_from)
    return 0 if diff.identical else 1
