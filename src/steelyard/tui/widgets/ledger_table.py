"""The ledger as a virtual table: a ScrollView that draws only visible lines.

Line 0 is a fixed header; every other line is formatted on demand from the
row array (`rows.build_rows`) and the per-item numpy columns, so 100,000
items paint as fast as 20. Sort, filter, fold and grouping are view state
kept here; edits are asked for with messages, never made here.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, replace
from operator import attrgetter

import numpy as np
from rich.cells import cell_len, set_cell_size
from rich.segment import Segment
from textual.binding import Binding
from textual.geometry import Size
from textual.message import Message
from textual.scroll_view import ScrollView
from textual.strip import Strip

from steelyard.core.display import DisplayUnits, pretty_unit
from steelyard.core.numbers import cell
from steelyard.core.physics.groups import GroupTotal
from steelyard.core.document.model import Ledger
from steelyard.tui.state.assembly import file_stem, group_files, placed_mark
from steelyard.tui.state.rows import SORT_KEYS, LedgerIndex, RowSpec, build_rows, ungrouped_label
from steelyard.tui.text import clean


@dataclass(frozen=True)
class Column:
    key: str
    title: str
    width: int
    right: bool = True


_ID_NAME_GROUP = attrgetter("id", "name", "group")
_widest_memo: list = [None, None]  # [items, their widest texts]: the last ledger's, kept for its table


def widest_texts(items) -> tuple[int, int, int]:
    """Longest id, name and group of `items` (2, 4, 5 when there are none), remembered for the
    last items given: the load worker asks first, so the table's first layout finds them ready.
    One pass that reads each item once: at 100,000 items the cost is fetching the items from
    memory, and three C-level passes (one per field) took half as long again."""
    if _widest_memo[0] is not items:
        x, y, z = 2, 4, 5
        if items:
            x = y = z = 0
            for i, n, g in map(_ID_NAME_GROUP, items):
                if len(i) > x:
                    x = len(i)
                if len(n) > y:
                    y = len(n)
                if len(g) > z:
                    z = len(g)
        _widest_memo[1] = (x, y, z)
        _widest_memo[0] = items
    return _widest_memo[1]


def _fit(text: str, width: int, right: bool = False) -> str:
    if width <= 0:
        return ""
    if cell_len(text) > width:
        return set_cell_size(text, width - 1) + "…"
    pad = width - cell_len(text)
    return (" " * pad + text) if right else (text + " " * pad)


#: the id, name and group columns never get narrower than these
MIN_ID, MIN_NAME, MIN_GROUP = 8, 10, 8
#: nor wider than these: past them a long text is cut rather than squeezing the others
MAX_ID, MAX_GROUP = 28, 28


def share_text_width(room: int, id_len: int, name_len: int, group_len: int, show_group: bool) -> tuple[int, int, int]:
    """(id, group, name) widths from `room` cells: id and group as wide as their longest text first.

    The name column takes what is left, so spare width never sits in the
    name while an id or group is cut; when room is short, id and group give
    back cells (the wider first) until the name has its minimum.
    """
    id_w = max(MIN_ID, min(MAX_ID, id_len, room))
    group_w = max(MIN_GROUP, min(MAX_GROUP, group_len)) if show_group else 0
    while room - id_w - group_w < MIN_NAME and (id_w > MIN_ID or group_w > MIN_GROUP):
        if group_w > MIN_GROUP and (group_w >= id_w or id_w <= MIN_ID):
            group_w -= 1
        else:
            id_w -= 1
    name_w = max(MIN_NAME, room - id_w - group_w)
    return id_w, group_w, name_w


def _num(x: float, width: int, decimals: int = 3) -> str:
    """One cell: the column's decimals (docs/numbers.md); fewer only if the number would not fit."""
    for digits in range(decimals, -1, -1):
        text = cell(x, digits)
        if len(text) <= width:
            return text
    return f"{x:.{max(width - 6, 1)}e}"


def _largest(values: np.ndarray) -> float:
    """The largest finite magnitude (vectorised: a column of 100,000 items costs one pass)."""
    a = np.abs(np.asarray(values, dtype=float))
    a = a[np.isfinite(a)]
    return float(a.max()) if a.size else 0.0


def _marked(mark: str, name: str, width: int) -> str:
    """A placed row's name cell: its file's mark always whole (the name gives way first)."""
    if cell_len(mark) + cell_len(name) <= width:
        return mark + name
    if cell_len(mark) + 2 <= width:
        return mark + set_cell_size(name, width - cell_len(mark) - 1) + "…"
    bare = mark.strip()
    if cell_len(bare) <= width:
        return bare
    return set_cell_size(bare, max(width - 2, 1)) + "…›"


class LedgerTable(ScrollView, can_focus=True):
    """Items and group subtotals; the cursor row is reversed, never only coloured."""

    COMPONENT_CLASSES = {"ledger-table--header", "ledger-table--cursor", "ledger-table--group"}
    BINDINGS = [
        Binding("up,k", "move(-1)", "Up", show=False),
        Binding("down,j", "move(1)", "Down", show=False),
        Binding("pageup", "page(-1)", "Page up", show=False),
        Binding("pagedown", "page(1)", "Page down", show=False),
        Binding("home", "move_to(0)", "First row", show=False),
        Binding("end", "move_to(-1)", "Last row", show=False),
        Binding("left,h", "scroll_side(-4)", "Scroll left", show=False),
        Binding("right,l", "scroll_side(4)", "Scroll right", show=False),
        Binding("enter", "activate", "Edit / fold", show=False),
        Binding("space", "fold", "Fold group", show=False),
    ]

    class EditRequested(Message):
        """Enter on an item row: the user wants to edit it."""

        def __init__(self, item_id: str) -> None:
            super().__init__()
            self.item_id = item_id

    def __init__(self, **kw) -> None:
        super().__init__(**kw)
        self.spec = RowSpec()
        self.cursor = 0
        self.rows = np.zeros(0, np.int64)
        self.ledger: Ledger | None = None
        self._widths_key: tuple | None = None
        self._widths = (12, 20, 14)
        self._widest_of = None  # the items whose widest id, name and group `_widest` holds
        self._widest = (2, 4, 5)
        self.mass = np.zeros(0)
        self.cg = np.zeros((0, 3))
        self.fill = np.zeros(0)
        self.du: DisplayUnits | None = None
        self.groups: list[GroupTotal] = []
        self.index: LedgerIndex | None = None
        self.painted_at: float | None = None  # set on the first paint with data (benchmarks)
        self._decimals: dict[str, int] = dict.fromkeys(("mass", "x", "y", "z", "moment"), 3)

    # ------------------------------------------------------------ data down
    def show(self, ledger: Ledger, state, du: DisplayUnits, groups: list[GroupTotal] | None = None) -> None:
        """New numbers (and, when given, new group subtotals); keeps the cursor on its row."""
        anchor = self._anchor()
        self.ledger, self.du = ledger, du
        if state is not None:
            self.mass, self.cg, self.fill = state.mass, state.cg, state.fill
        else:
            n = len(ledger.items)
            self.mass, self.cg, self.fill = np.zeros(n), np.zeros((n, 3)), np.zeros(n)
        if groups is not None:
            self.groups = groups  # until new subtotals arrive, items of new groups show last
        self.index = LedgerIndex(ledger.items, self.groups, reuse=self.index)
        self._decimals = self._column_decimals()
        self._rebuild(anchor)

    def _column_decimals(self) -> dict[str, int]:
        """One count of decimals per numeric column, for the largest value it shows (items and groups)."""
        du = self.du
        gm = np.array([g.mass for g in self.groups], dtype=float)
        gc = np.array([g.cg for g in self.groups], dtype=float).reshape(-1, 3)
        mass = max(_largest(self.mass), _largest(gm))
        cg = max(_largest(self.cg), _largest(gc))  # x, y and z at one resolution
        mom = max(_largest(self.mass * self.cg[:, 0]) if len(self.mass) else 0.0, _largest(gm * gc[:, 0]))
        out = {"mass": du.column_decimals([mass], "mass"), "moment": du.column_decimals([mom], "moment")}
        out.update(dict.fromkeys("xyz", du.column_decimals([cg], "length")))
        return out

    def set_spec(self, **changes) -> None:
        anchor = self._anchor()
        self.spec = replace(self.spec, **changes)
        self._rebuild(anchor)

    def _rebuild(self, anchor) -> None:
        if self.index is None:
            return
        self.rows = build_rows(self.index, self.spec, self.mass, self.cg)
        self.virtual_size = Size(self._total_width(), len(self.rows) + 1)
        self._restore(anchor)
        self.refresh()

    def _anchor(self):
        if self.ledger is None or not len(self.rows):
            return None
        ref = int(self.rows[min(self.cursor, len(self.rows) - 1)])
        if ref >= 0:
            return ("item", self.ledger.items[ref].id) if ref < len(self.ledger.items) else None
        return ("group", self.groups[-ref - 1].path) if -ref - 1 < len(self.groups) else None

    def _restore(self, anchor) -> None:
        target = None
        if anchor is not None and self.ledger is not None:
            kind, key = anchor
            if kind == "item":
                i = self.ledger.index.get(key)
                target = None if i is None else i
            elif self.index is not None and key in self.index.pos:
                target = -(self.index.pos[key] + 1)
        if target is not None:
            hit = np.flatnonzero(self.rows == target)
            if hit.size:
                self.cursor = int(hit[0])
        self.cursor = max(0, min(self.cursor, len(self.rows) - 1))
        self._keep_visible(center=True)

    # --------------------------------------------------------------- queries
    @property
    def current_item_id(self) -> str | None:
        if not len(self.rows) or self.ledger is None:
            return None
        ref = int(self.rows[self.cursor])
        return self.ledger.items[ref].id if 0 <= ref < len(self.ledger.items) else None

    @property
    def current_group(self) -> str | None:
        if not len(self.rows):
            return None
        ref = int(self.rows[self.cursor])
        if ref < 0:
            return self.groups[-ref - 1].path
        item_id = self.current_item_id
        return None if item_id is None else self.ledger.item(item_id).group

    def go_to_item(self, item_id: str) -> None:
        self._restore(("item", item_id))
        self.refresh()

    # ---------------------------------------------------------------- layout
    def columns(self) -> list[Column]:
        width = max(self.scrollable_content_region.width, 40)
        du = self.du
        mu = pretty_unit(du.mass) if du else ""
        lu = pretty_unit(du.length) if du else ""
        mom = pretty_unit(du.moment) if du else ""  # the x moment: mass × station
        show_group = not self.spec.grouped or width >= 110
        fixed = [Column("qty", "qty", 4), Column("mass", f"mass {mu}", 9), Column("x", f"x {lu}", 8),
                 Column("y", f"y {lu}", 7), Column("z", f"z {lu}", 7), Column("moment", f"Mx {mom}", 10)]
        seps = len(fixed) + (3 if show_group else 2) - 1
        room = width - sum(c.width for c in fixed) - seps
        id_w, group_w, name_w = share_text_width(room, *self._text_widths(), show_group)
        cols = [Column("id", "id", id_w, False), Column("name", "name", name_w, False)]
        if show_group:
            cols.append(Column("group", "group", group_w, False))
        return cols + fixed

    def _text_widths(self) -> tuple[int, int, int]:
        """Widest id (with its indent when grouped), name and group of this ledger, once per ledger."""
        ledger = self.ledger
        if ledger is None:
            return 12, 20, 14
        items = ledger.items
        if self._widest_of is not items:
            self._widest = widest_texts(items)
            self._widest_of = items
            self._widths_key = None
        key = (self.spec.grouped, len(self.groups))
        if self._widths_key != key:
            indent = max((g.depth for g in self.groups), default=-1) + 1 if self.spec.grouped else 0
            self._widths = (self._widest[0] + indent, self._widest[1], self._widest[2])
            self._widths_key = key
        return self._widths

    def _total_width(self) -> int:
        cols = self.columns()
        return sum(c.width for c in cols) + len(cols) - 1

    def on_resize(self) -> None:
        self.virtual_size = Size(self._total_width(), len(self.rows) + 1)
        self._keep_visible()

    # ---------------------------------------------------------------- paint
    def render_line(self, y: int) -> Strip:
        scroll_x, scroll_y = self.scroll_offset
        width = self.size.width
        base = self.rich_style
        if y == 0:
            text, style = self._header(), self.get_component_rich_style("ledger-table--header")
        else:
            k = scroll_y + y - 1
            if k >= len(self.rows):
                return Strip.blank(width, base)
            ref = int(self.rows[k])
            text = self._item_line(ref) if ref >= 0 else self._group_line(-ref - 1)
            style = base
            if ref < 0:
                style = base + self.get_component_rich_style("ledger-table--group")
            if k == self.cursor:
                style = style + self.get_component_rich_style("ledger-table--cursor")
            if self.painted_at is None and self.ledger is not None:
                self.painted_at = time.perf_counter()
        strip = Strip([Segment(text, style)], cell_len(text))
        return strip.crop_extend(scroll_x, scroll_x + width, base)

    def _header(self) -> str:
        out = []
        for c in self.columns():
            title = c.title
            if c.key == self.spec.sort:
                title += " ▼" if self.spec.descending else " ▲"
            out.append(_fit(title, c.width, c.right))
        return " ".join(out)

    def _cells(self, texts: dict[str, str]) -> str:
        return " ".join(_fit(texts.get(c.key, ""), c.width, c.right) for c in self.columns())

    def _numbers(self, mass: float, cg, widths: dict[str, int]) -> dict[str, str]:
        du, d = self.du, self._decimals
        out = {"mass": _num(du.m(mass), widths["mass"], d["mass"])}
        for k, a in enumerate("xyz"):
            out[a] = _num(du.l(cg[k]), widths[a], d[a])  # NaN (an empty group) shows as "—"
        mx = du.mom(mass * cg[0]) if mass > 0 else 0.0
        out["moment"] = _num(mx, widths["moment"], d["moment"])
        return out

    def _item_line(self, i: int) -> str:
        it = self.ledger.items[i]
        widths = {c.key: c.width for c in self.columns()}
        depth = 0
        if self.spec.grouped and self.index is not None and self.index.groups:
            leaf = self.index.leaf[i]
            depth = self.groups[leaf].depth + 1 if leaf >= 0 else 0
        qty = f"×{it.quantity}" if it.quantity != 1 else ""
        if it.variable:
            qty = f"{self.fill[i] * 100:.0f}%"
        name = clean(it.name) if it.source is None else _marked(placed_mark(self.ledger, it), clean(it.name),
                                                               widths["name"])
        texts = {"id": " " * depth + clean(it.id), "name": name, "group": clean(it.group), "qty": qty}
        texts.update(self._numbers(float(self.mass[i]), self.cg[i], widths))
        return self._cells(texts)

    def _group_line(self, g: int) -> str:
        gt = self.groups[g]
        cols = self.columns()
        widths = {c.key: c.width for c in cols}
        mark = "▸" if gt.path in self.spec.folded else "▾"
        placed = group_files(self.ledger).get(gt.path) if self.ledger is not None and self.ledger.placed else None
        file = f" ‹{clean(file_stem(placed))}›" if placed is not None else ""  # a placement: its file
        label = f"{' ' * gt.depth}{mark} {clean(ungrouped_label(gt.path.rsplit('/', 1)[-1]))}{file} ({gt.count})"
        texts = self._numbers(gt.mass, gt.cg, widths)
        lead = widths["id"] + 1 + widths["name"] + (1 + widths["group"] if "group" in widths else 0)
        rest = " ".join(_fit(texts.get(c.key, ""), c.width, c.right) for c in cols
                        if c.key not in ("id", "name", "group"))
        return _fit(label, lead) + " " + rest

    # ------------------------------------------------------------- movement
    def _page(self) -> int:
        return max(1, self.size.height - 2)

    def _keep_visible(self, center: bool = False) -> None:
        """Scroll as little as needed; after a jump (`center`), put the cursor mid-screen."""
        height = max(1, self.size.height - 1)
        top = int(self.scroll_offset.y)
        if not (top <= self.cursor < top + height) and center:
            self.scroll_to(y=max(0, self.cursor - height // 2), animate=False, immediate=True)
        elif self.cursor < top:
            self.scroll_to(y=self.cursor, animate=False, immediate=True)
        elif self.cursor >= top + height:
            self.scroll_to(y=self.cursor - height + 1, animate=False, immediate=True)

    def _set_cursor(self, k: int) -> None:
        if not len(self.rows):
            return
        old = self.cursor
        self.cursor = max(0, min(k, len(self.rows) - 1))
        top = int(self.scroll_offset.y)
        self._keep_visible()
        if int(self.scroll_offset.y) == top:
            self.refresh_line(old + 1)  # row k is virtual line k + 1 (line 0 is the header)
            self.refresh_line(self.cursor + 1)
        else:
            self.refresh()

    def action_move(self, step: int) -> None:
        self._set_cursor(self.cursor + step)

    def action_page(self, step: int) -> None:
        self._set_cursor(self.cursor + step * self._page())

    def action_move_to(self, k: int) -> None:
        self._set_cursor(k if k >= 0 else len(self.rows) - 1)

    def action_scroll_side(self, step: int) -> None:
        self.scroll_to(x=max(0, self.scroll_offset.x + step), animate=False)

    def action_activate(self) -> None:
        if not len(self.rows):
            return
        ref = int(self.rows[self.cursor])
        if ref < 0:
            self.action_fold()
        else:
            self.post_message(self.EditRequested(self.ledger.items[ref].id))

    def action_fold(self) -> None:
        """Fold or unfold the group under the cursor (or the group of the item there)."""
        if not len(self.rows) or not self.groups:
            return
        ref = int(self.rows[self.cursor])
        if ref < 0:
            path = self.groups[-ref - 1].path
        else:
            leaf = self.index.leaf[ref]
            if leaf < 0:
                return
            path = self.groups[leaf].path
        folded = set(self.spec.folded)
        folded.symmetric_difference_update({path})
        self.spec = replace(self.spec, folded=frozenset(folded))
        self._rebuild(("group", path))

    def fold_all(self, fold: bool) -> None:
        paths = frozenset(g.path for g in self.groups) if fold else frozenset()
        self.set_spec(folded=paths)

    def cycle_sort(self) -> str:
        k = SORT_KEYS.index(self.spec.sort)
        key = SORT_KEYS[(k + 1) % len(SORT_KEYS)]
        self.set_spec(sort=key)
        return key
