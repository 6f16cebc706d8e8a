"""Group subtotals for the weight statement.

Groups are "/" paths ("power/storage"); an item counts towards every prefix
("power" and "power/storage"). Sums run through `np.bincount`, so the cost is
a few array passes whatever the number of groups. Paths are split once and
their prefixes found part by part in a tree (parent, part), so the work is
linear in the total length of the paths; a depth limit keeps the printed
statement (one line per prefix) from growing with the square of a hostile depth.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

UNGROUPED = "(ungrouped)"
#: deepest group path a ledger may give: real breakdowns are a handful of levels
MAX_GROUP_DEPTH = 64


@dataclass(frozen=True)
class GroupTotal:
    path: str
    depth: int  # 0 for top-level groups
    count: int  # rows in this group and below
    mass: float
    cg: np.ndarray  # (3,), NaN for zero mass
    inertia_cg: np.ndarray  # (3, 3) about the group's own CG


def group_depth_problem(path: str) -> str | None:
    """Why a group path is too deep to accept, or None. For the reader's "group" field check."""
    if path.count("/") < MAX_GROUP_DEPTH:  # fewer separators than the limit: cannot be too deep
        return None
    depth = sum(1 for p in path.split("/") if p)
    if depth <= MAX_GROUP_DEPTH:
        return None
    return f"is {depth} levels deep; a group path may have at most {MAX_GROUP_DEPTH} levels"


def prefixes(path: str) -> list[str]:
    parts = [p for p in path.split("/") if p] or [UNGROUPED]
    out, text = [], ""
    for p in parts:
        text = f"{text}/{p}" if text else p
        out.append(text)
    return out


def _tree(names: list[str]) -> tuple[list[list[int]], list[int], list[str]]:
    """Each distinct group's chain of node indices (root first), and per node its parent and part.

    Nodes are keyed by (parent, part), so no prefix string is built or hashed: linear
    in the total length of the paths."""
    node_of: dict[tuple[int, str], int] = {}
    parent: list[int] = []
    part: list[str] = []
    chains = []
    for g in names:
        chain, at = [], -1
        for p in [p for p in g.split("/") if p] or [UNGROUPED]:
            k = node_of.get((at, p))
            if k is None:
                k = node_of[(at, p)] = len(parent)
                parent.append(at)
                part.append(p)
            chain.append(k)
            at = k
        chains.append(chain)
    return chains, parent, part


def _tree_order(parent: list[int], part: list[str]) -> list[tuple[int, str, int]]:
    """(node, full path, depth) with parents before children, siblings by name."""
    children: dict[int, list[int]] = {}
    for k, p in enumerate(parent):
        children.setdefault(p, []).append(k)
    out: list[tuple[int, str, int]] = []
    stack = [(k, part[k], 0) for k in sorted(children.get(-1, []), key=part.__getitem__, reverse=True)]
    while stack:
        k, path, depth = stack.pop()
        out.append((k, path, depth))
        for c in sorted(children.get(k, []), key=part.__getitem__, reverse=True):
            stack.append((c, f"{path}/{part[c]}", depth + 1))
    return out


def subtotals(groups: list[str], mass: np.ndarray, cg: np.ndarray, own: np.ndarray) -> list[GroupTotal]:
    """Subtotals for every group path, sorted as a tree (parents before children)."""
    n = len(groups)
    if n == 0:
        return []
    code_of: dict[str, int] = {}
    codes = np.fromiter((code_of.setdefault(g, len(code_of)) for g in groups), np.int64, n)
    chains, parent, part = _tree(list(code_of))  # dicts keep insertion order: code k is the k-th key
    lengths = np.array([len(c) for c in chains])
    flat = np.concatenate([np.array(c, dtype=np.int64) for c in chains])
    starts = np.concatenate([[0], np.cumsum(lengths)[:-1]])
    # expand: every row once per prefix of its group
    rep = lengths[codes]
    rows = np.repeat(np.arange(n), rep)
    offs = np.arange(rows.size) - np.repeat(np.cumsum(rep) - rep, rep)
    cols = flat[starts[codes][rows] + offs]
    g = len(parent)
    m = mass[rows]
    with np.errstate(under="ignore"):  # denormal masses: products underflow towards 0, which is right
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
    return [GroupTotal(path, depth, int(count[k]), float(big_m[k]), c[k], inertia[k])
            for k, path, depth in _tree_order(parent, part)]
