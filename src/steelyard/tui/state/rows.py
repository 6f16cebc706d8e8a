"""Which lines the ledger table shows, in what order: pure numpy, no widgets.

The table never holds one object per row. It keeps one int array `rows`:
an entry >= 0 is an item index into the ledger, an entry < 0 is the group
header `-(g + 1)` of `groups[g]` (tree order from `core.groups.subtotals`).
Sorting, filtering and folding rebuild that array with a few array passes, so
100,000 items cost milliseconds, and the widget formats only visible lines.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from steelyard.core.physics.groups import UNGROUPED, GroupTotal, prefixes

#: sortable columns; "file" keeps the file's order
SORT_KEYS = ("file", "id", "name", "group", "mass", "x", "y", "z", "moment")


def leaf_path(group: str) -> str:
    """The normalised group path an item sits in ("a//b" -> "a/b", "" -> UNGROUPED)."""
    return prefixes(group)[-1]


@dataclass(frozen=True)
class RowSpec:
    """What the user asked to see."""

    grouped: bool = True
    sort: str = "file"
    descending: bool = False
    filter: str = ""
    folded: frozenset[str] = field(default_factory=frozenset)


class LedgerIndex:
    """Per-ledger lookups built once (group positions, search text, string ranks)."""

    def __init__(self, items, groups: list[GroupTotal] | None, reuse: "LedgerIndex | None" = None):
        self.items = items
        self.n = len(items)
        self.groups = groups or []
        self.pos = {g.path: k for k, g in enumerate(self.groups)}
        self._leaf: np.ndarray | None = None
        self._hay: list[str] | None = None
        self._ranks: dict[str, np.ndarray] = {}
        if reuse is None:
            return
        if reuse.items is items:  # same items, new subtotals
            self._hay, self._ranks = reuse._hay, reuse._ranks
            if reuse.groups is self.groups:
                self._leaf = reuse._leaf
        elif reuse.n == self.n and reuse.groups is self.groups:
            self._patch(reuse)

    def _patch(self, old: "LedgerIndex") -> None:
        """An edit replaced a few items in place: redo only their entries (a 100k-item edit stays cheap)."""
        new_items, old_items = self.items, old.items
        changed = np.flatnonzero(np.fromiter((a is not b for a, b in zip(new_items, old_items)), bool, self.n))
        if changed.size > 64:
            return  # a bulk change: rebuild lazily
        same_text = all((new_items[i].id, new_items[i].name, new_items[i].group)
                        == (old_items[i].id, old_items[i].name, old_items[i].group) for i in changed)
        if same_text:
            self._hay, self._ranks = old._hay, old._ranks
        if old._leaf is not None:
            leaf = old._leaf.copy()
            for i in changed:
                leaf[i] = self.pos.get(leaf_path(new_items[i].group), -1)
            self._leaf = leaf

    @property
    def leaf(self) -> np.ndarray:
        """Group position of each item's own group (-1 when subtotals are not known yet)."""
        if self._leaf is None:
            memo: dict[str, int] = {}
            pos = self.pos

            def code(g: str) -> int:
                c = memo.get(g)
                if c is None:
                    c = memo[g] = pos.get(leaf_path(g), -1)
                return c

            self._leaf = np.fromiter((code(it.group) for it in self.items), np.int64, self.n)
        return self._leaf

    def matches(self, text: str) -> np.ndarray:
        """Items whose id, name or group contains `text` (case-insensitive)."""
        if self._hay is None:
            self._hay = [f"{it.id}\n{it.name}\n{it.group}".lower() for it in self.items]
        q = text.lower()
        return np.fromiter((q in h for h in self._hay), bool, self.n)

    def rank(self, key: str) -> np.ndarray:
        """Sort rank of each item by a text column."""
        r = self._ranks.get(key)
        if r is None:
            attr = {"id": "id", "name": "label", "group": "group"}[key]
            values = np.array([getattr(it, attr).lower() for it in self.items] or [""])[: self.n]
            order = np.argsort(values, kind="stable")
            r = np.empty(self.n, np.int64)
            r[order] = np.arange(self.n)
            self._ranks[key] = r
        return r


def _sort_values(index: LedgerIndex, spec: RowSpec, mass: np.ndarray, cg: np.ndarray) -> np.ndarray:
    key = spec.sort
    if key == "file":
        values = np.arange(index.n, dtype=float)
    elif key in ("id", "name", "group"):
        values = index.rank(key).astype(float)
    elif key == "mass":
        values = mass
    elif key in ("x", "y", "z"):
        values = cg[:, "xyz".index(key)]
    else:  # moment about the datum on x
        values = mass * cg[:, 0]
    return -values if spec.descending else values


def _parents(groups: list[GroupTotal], pos: dict[str, int]) -> np.ndarray:
    out = np.full(len(groups), -1, np.int64)
    for k, g in enumerate(groups):
        if "/" in g.path:
            out[k] = pos.get(g.path.rsplit("/", 1)[0], -1)
    return out


def build_rows(index: LedgerIndex, spec: RowSpec, mass: np.ndarray, cg: np.ndarray) -> np.ndarray:
    """The visible rows for `spec` (see module docstring for the encoding)."""
    n = index.n
    keep = np.ones(n, bool) if not spec.filter else index.matches(spec.filter)
    values = _sort_values(index, spec, mass, cg)
    groups = index.groups
    if not spec.grouped or not groups:
        items = np.flatnonzero(keep)
        return items[np.argsort(values[items], kind="stable")]
    leaf = index.leaf
    parent = _parents(groups, index.pos)
    ng = len(groups)
    # a group is hidden when an ancestor is folded; its items also when it is folded itself
    folded = np.zeros(ng, bool)
    for path in spec.folded:
        k = index.pos.get(path)
        if k is not None:
            folded[k] = True
    hidden = np.zeros(ng, bool)
    for k in range(ng):  # tree order: parents come first
        p = parent[k]
        if p >= 0:
            hidden[k] = hidden[p] or folded[p]
    closed = hidden | folded
    has_leaf = leaf >= 0
    items = np.flatnonzero(keep & has_leaf)
    # with a filter, show only groups that still hold a matching item somewhere below
    shown = ~hidden
    if spec.filter:
        count = np.bincount(leaf[items], minlength=ng)
        for k in range(ng - 1, -1, -1):  # children come after parents
            if parent[k] >= 0:
                count[parent[k]] += count[k]
        shown &= count > 0
    items = items[~closed[leaf[items]]]
    heads = np.flatnonzero(shown)
    lp = leaf[items]
    order = np.lexsort((values[items], lp))
    items, lp = items[order], lp[order]
    refs = np.concatenate([-(heads + 1), items])
    keys = np.concatenate([heads * 2, lp * 2 + 1])
    out = refs[np.argsort(keys, kind="stable")]
    stray = np.flatnonzero(keep & ~has_leaf)  # items of groups not yet in the subtotals
    return np.concatenate([out, stray]) if stray.size else out


def ungrouped_label(path: str) -> str:
    return "(no group)" if path == UNGROUPED else path
