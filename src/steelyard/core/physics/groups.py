"""Group subtotals for the weight statement.

Groups are "/" paths ("power/storage"); an item counts towards every prefix
("power" and "power/storage"). Sums run through `np.bincount`, so the cost is
a few array passes whatever the number of groups.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

UNGROUPED = "(ungrouped)"


@dataclass(frozen=True)
class GroupTotal:
    path: str
    depth: int  # 0 for top-level groups
    count: int  # rows in this group and below
    mass: float
    cg: np.ndarray  # (3,), NaN for zero mass
    inertia_cg: np.ndarray  # (3, 3) about the group's own CG


def prefixes(path: str) -> list[str]:
    parts = [p for p in path.split("/") if p] or [UNGROUPED]
    return ["/".join(parts[: k + 1]) for k in range(len(parts))]


def subtotals(groups: list[str], mass: np.ndarray, cg: np.ndarray, own: np.ndarray) -> list[GroupTotal]:
    """Subtotals for every group path, sorted as a tree (parents before children)."""
    n = len(groups)
    if n == 0:
        return []
    code_of: dict[str, int] = {}
    codes = np.fromiter((code_of.setdefault(g, len(code_of)) for g in groups), np.int64, n)
    path_index: dict[str, int] = {}
    pref_of_code: list[list[int]] = []
    for g in code_of:  # dicts keep insertion order: code k is the k-th key
        pref_of_code.append([path_index.setdefault(p, len(path_index)) for p in prefixes(g)])
    lengths = np.array([len(p) for p in pref_of_code])
    flat = np.concatenate([np.array(p, dtype=np.int64) for p in pref_of_code])
    starts = np.concatenate([[0], np.cumsum(lengths)[:-1]])
    # expand: every row once per prefix of its group
    rep = lengths[codes]
    rows = np.repeat(np.arange(n), rep)
    offs = np.arange(rows.size) - np.repeat(np.cumsum(rep) - rep, rep)
    cols = flat[starts[codes][rows] + offs]
    g = len(path_index)
    m = mass[rows]
    big_m = np.bincount(cols, m, g)
    safe = np.where(big_m > 0, big_m, 1.0)
    c = np.stack([np.bincount(cols, m * cg[rows, k], g) for k in range(3)], axis=1) / safe[:, None]
    d = cg[rows] - c[cols]
    c = c + np.stack([np.bincount(cols, m * d[:, k], g) for k in range(3)], axis=1) / safe[:, None]
    d = cg[rows] - c[cols]
    s = np.empty((g, 3, 3))
    o = np.empty((g, 3, 3))
    own_rows = own[rows]
    for j in range(3):
        for k in range(j, 3):
            s[:, j, k] = s[:, k, j] = np.bincount(cols, m * d[:, j] * d[:, k], g)
            o[:, j, k] = o[:, k, j] = np.bincount(cols, own_rows[:, j, k], g)
    tr = np.trace(s, axis1=1, axis2=2)
    inertia = o + tr[:, None, None] * np.eye(3) - s
    count = np.bincount(cols, None, g).astype(int)
    c[big_m <= 0] = np.nan
    out = [GroupTotal(p, p.count("/"), int(count[i]), float(big_m[i]), c[i], inertia[i])
           for p, i in path_index.items()]
    out.sort(key=lambda t: t.path.split("/"))
    return out
