"""What a diff of two trees says about their assemblies: changed placements and where items came from.

Placements are matched by their full id (nested ones too). A placement whose
`at`, `mirror`, `rotate`, `group` or `file` changed is reported as such, with
what it carries (mass, CG as carried) on each side and how far that change
alone moves A's CG. When the placed file itself is unchanged (same SHA-256),
its items' new CGs and inertias follow from the move alone: they are folded
into the placement's line instead of listed item by item. Every item change
names the file the item comes from (a snapshot: from its recorded sources).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from steelyard.core.assembly.flatten import Placed, placed_totals
from steelyard.core.document.model import Ledger

#: placement keys compared, as the file names them
KEYS = ("file", "group", "at", "mirror", "rotate")


@dataclass(frozen=True)
class PlacementChange:
    id: str
    kind: str  # "added" | "removed" | "changed"
    fields: Mapping[str, tuple[object, object]]  # key -> (A, B), `at` in metres
    file: str  # B's file (A's when removed)
    mass: tuple[float | None, float | None]  # kg carried by the placement, A and B
    cg: tuple[np.ndarray | None, np.ndarray | None]  # m, parent frame
    cg_shift: np.ndarray  # (3,) m: A's CG moved by this change alone
    folded: int = 0  # item changes that follow from the move alone (not listed one by one)


def _by_id(ledger: Ledger) -> dict[str, Placed]:
    return {p.id: p for p in ledger.placed}


def _fields(p: Placed | None) -> dict:
    if p is None:
        return {}
    q = p.placement
    return {"file": p.file, "group": q.group or None, "at": [float(x) for x in q.at], "mirror": q.mirror,
            "rotate": [[a, d] for a, d in q.rotate] or None}


def file_of(ledger: Ledger, item_id: str) -> str | None:
    """The file an item of `ledger` comes from (None: the file's own item)."""
    i = ledger.index.get(item_id)
    if i is None:
        return None
    src = ledger.items[i].source
    if src is not None:
        for p in ledger.placed:
            if p.id == src:
                return p.file
        return None
    from_record = (ledger.snapshot or {}).get("sources") or ()
    best = None
    for s in from_record:  # a snapshot: the longest recorded placement id the item's id starts with
        if isinstance(s, Mapping) and isinstance(s.get("assembly"), str) and item_id.startswith(s["assembly"] + "/"):
            if best is None or len(s["assembly"]) > len(best[0]):
                best = (s["assembly"], s.get("file"))
    return best[1] if best else None


def placement_changes(a_ledger: Ledger, a_mass: np.ndarray, a_cg: np.ndarray, a_total: float, a_cg_total,
                      b_ledger: Ledger, b_mass: np.ndarray, b_cg: np.ndarray,
                      changed_ids: set[str]) -> tuple[list[PlacementChange], set[str]]:
    """(changes, ids of item changes folded into a moved placement)."""
    pa, pb = _by_id(a_ledger), _by_id(b_ledger)
    out: list[PlacementChange] = []
    folded: set[str] = set()
    for pid in list(pa) + [k for k in pb if k not in pa]:
        x, y = pa.get(pid), pb.get(pid)
        fx, fy = _fields(x), _fields(y)
        fields = {k: (fx.get(k), fy.get(k)) for k in KEYS if fx.get(k) != fy.get(k)}
        if x is not None and y is not None and not fields:
            continue
        kind = "added" if x is None else "removed" if y is None else "changed"
        ma, ca = placed_totals(x, a_mass, a_cg) if x is not None else (0.0, None)
        mb, cb = placed_totals(y, b_mass, b_cg) if y is not None else (0.0, None)
        moment = (mb * (cb if cb is not None and mb > 0 else 0)) - (ma * (ca if ca is not None and ma > 0 else 0))
        total = a_total + mb - ma
        shift = ((a_total * np.asarray(a_cg_total) + moment) / total - a_cg_total) if total > 0 and a_total > 0 \
            else np.full(3, np.nan)
        n = 0
        if kind == "changed" and "file" not in fields:
            mine = {c for c in changed_ids if c.startswith(pid + "/") and _same_files(c, pid, pa, pb, b_ledger)}
            folded |= mine
            n = len(mine)
        out.append(PlacementChange(pid, kind, fields, (y or x).file, (ma if x else None, mb if y else None),
                                   (ca, cb), np.asarray(shift, dtype=float), n))
    return out, folded


def _same_files(item_id: str, pid: str, pa: dict, pb: dict, b_ledger: Ledger) -> bool:
    """Every file from placement `pid` down to the item's own is byte for byte the same on both sides."""
    i = b_ledger.index.get(item_id)
    src = b_ledger.items[i].source if i is not None else None
    if src is None or not (src == pid or src.startswith(pid + "/")):
        return False
    parts = src.split("/")
    for k in range(pid.count("/") + 1, len(parts) + 1):
        q = "/".join(parts[:k])
        x, y = pa.get(q), pb.get(q)
        if x is None or y is None or x.sha256 != y.sha256:
            return False
    return True
