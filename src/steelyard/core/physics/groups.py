"""Group subtotals for the weight statement.

Groups are "/" paths ("power/storage"); an item counts towards every prefix
("power" and "power/storage"). Sums run through `np.bincount`, so the cost is
a few array passes whatever the number of groups; a group's sums add its rows
in file order (a figure does not depend on how groups are numbered, and own
tensors are added only for the rows that have one). Paths are split once and
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


def _expand(codes: np.ndarray, lengths: np.ndarray, starts: np.ndarray, flat: np.ndarray):
    """(row, node) pairs: every row once per prefix of its path, rows in order, each row's
    prefixes root first. The sums below run through these pairs in this order."""
    rep = lengths[codes]
    if rep.size and int(rep.max()) == 1:  # every path one level deep: one pair per row
        return np.arange(codes.size), flat[starts[codes]]
    rows = np.repeat(np.arange(codes.size), rep)
    ends = np.cumsum(rep)
    offs = np.arange(rows.size) - np.repeat(ends - rep, rep)
    return rows, flat[np.repeat(starts[codes], rep) + offs]


def subtotals(groups: list[str], mass: np.ndarray, cg: np.ndarray, own) -> list[GroupTotal]:
    """Subtotals for every group path, sorted as a tree (parents before children).

    `own`: the rows' own tensors, dense (n, 3, 3) or sparse (rows ascending, (k, 3, 3) tensors):
    only the rows that have one are added up."""
    n = len(groups)
    if n == 0:
        return []
    first: dict[str, int] = {}  # distinct path -> its first row, in order of appearance (one dict pass)
    seen = np.fromiter(map(first.setdefault, groups, range(n)), np.intp, n)
    dense = np.empty(n, dtype=np.intp)
    dense[list(first.values())] = np.arange(len(first))
    codes = dense[seen]  # code k: the k-th distinct path
    chains, parent, part = _tree(list(first))
    lengths = np.array([len(c) for c in chains])
    flat = np.concatenate([np.array(c, dtype=np.intp) for c in chains])
    starts = np.concatenate([[0], np.cumsum(lengths)[:-1]])
    rows, cols = _expand(codes, lengths, starts, flat)
    g = len(parent)
    m = mass[rows]
    r = [cg[:, k][rows] for k in range(3)]
    with np.errstate(under="ignore"):  # denormal masses: products underflow towards 0, which is right
        big_m = np.bincount(cols, m, g)
        safe = np.where(big_m > 0, big_m, 1.0)
        c = [np.bincount(cols, m * r[k], g) / safe for k in range(3)]  # the mean, then the mean of the rest
        c = [c[k] + np.bincount(cols, m * (r[k] - c[k][cols]), g) / safe for k in range(3)]
        d = [r[k] - c[k][cols] for k in range(3)]
        s = np.empty((g, 3, 3))
        for j in range(3):
            md = m * d[j]
            for k in range(j, 3):
                s[:, j, k] = s[:, k, j] = np.bincount(cols, md * d[k], g)
        o = _own_sums(codes, own, lengths, starts, flat, g)
        tr = np.trace(s, axis1=1, axis2=2)
        inertia = o + tr[:, None, None] * np.eye(3) - s
    count = np.bincount(cols, None, g).astype(int)
    c = np.stack(c, axis=1)
    c[big_m <= 0] = np.nan
    return [GroupTotal(path, depth, int(count[k]), float(big_m[k]), c[k], inertia[k])
            for k, path, depth in _tree_order(parent, part)]


def _own_sums(codes, own, lengths, starts, flat, g: int) -> np.ndarray:
    """(g, 3, 3) sums of the own tensors per node, over the rows that have one, in row order."""
    if isinstance(own, tuple):
        at, values = np.asarray(own[0], dtype=np.intp), np.asarray(own[1], dtype=float).reshape(-1, 3, 3)
        rows, cols = _expand(codes[at], lengths, starts, flat)
    else:
        values = own
        rows, cols = _expand(codes, lengths, starts, flat)
    o = np.empty((g, 3, 3))
    for j in range(3):
        for k in range(j, 3):
            o[:, j, k] = o[:, k, j] = np.bincount(cols, values[:, j, k][rows], g)
    return o
