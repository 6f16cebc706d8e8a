"""Which files a snapshot froze, and whether they changed since.

A snapshot of a tree of ledgers is one self-contained file; its [snapshot]
record keeps `source` / `source_sha256` (the top file) and `sources`, one
entry per placement: the full assembly id, the file (from the top file's
folder) and the SHA-256 of its bytes as read. `--verify` and `diff` use
them to say which file changed since the snapshot was taken.
"""

from __future__ import annotations

import hashlib
import os
from collections.abc import Mapping

from steelyard.core.document.model import Ledger


def placed_sources(ledger: Ledger) -> list[dict]:
    """Each placement frozen into a snapshot: full id, file, SHA-256 (nested ones too).

    A snapshot of a snapshot keeps the sources the first one recorded.
    """
    before = (ledger.snapshot or {}).get("sources")
    if before:
        return [dict(s) for s in before]
    return [{"assembly": p.id, "file": p.file, "sha256": p.sha256} for p in ledger.placed]


def source_of(ledger: Ledger) -> dict[str, str]:
    """Full assembly id -> file, from a snapshot's record ({} when it records none)."""
    out = {}
    for s in (ledger.snapshot or {}).get("sources") or ():
        if isinstance(s, Mapping) and isinstance(s.get("assembly"), str) and isinstance(s.get("file"), str):
            out[s["assembly"]] = s["file"]
    return out


def _sha(path: str) -> str | None:
    try:
        with open(path, "rb") as f:
            return hashlib.sha256(f.read()).hexdigest()
    except OSError:
        return None


def source_changes(ledger: Ledger, snapshot_path: str) -> list[str]:
    """One line per file the snapshot was taken from: unchanged, changed since, or not found.

    A snapshot of one file says something only when that file changed since.

    The top file is looked for where the record says (relative paths: from
    the current folder, else from the snapshot's folder); placed files from
    the top file's folder.
    """
    record = ledger.snapshot or {}
    top = record.get("source")
    if not isinstance(top, str) or not top:
        return []
    if not os.path.isabs(top) and not os.path.exists(top):
        near = os.path.join(os.path.dirname(snapshot_path), top)
        top = near if os.path.exists(near) else top
    lines = []
    want = record.get("source_sha256")
    tree = bool(record.get("sources"))
    if isinstance(want, str):
        now = _sha(top)
        if tree or (now is not None and now != want):  # one file: said only when it changed since
            lines.append(_state(top, now, want, ""))
    by_file: dict[tuple[str, str], list[str]] = {}
    for s in record.get("sources") or ():
        if isinstance(s, Mapping) and all(isinstance(s.get(k), str) for k in ("assembly", "file", "sha256")):
            by_file.setdefault((s["file"], s["sha256"]), []).append(s["assembly"])
    folder = os.path.dirname(top)
    for (file, sha), ids in by_file.items():
        path = os.path.join(folder, *file.split("/"))
        lines.append(_state(file, _sha(path), sha, f" (placed as {', '.join(ids)})"))
    return lines


def _state(name: str, now: str | None, then: str, placed: str) -> str:
    if now is None:
        return f"source {name}{placed}: not found"
    if now == then:
        return f"source {name}{placed}: unchanged since the snapshot"
    return f"source {name}{placed}: CHANGED since the snapshot (sha256 {then[:12]}… then, {now[:12]}… now)"
