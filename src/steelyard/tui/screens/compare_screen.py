"""The compare screen: two configurations side by side, item by item.

Three tabs (keys 1 2 3): the totals of A and B with B − A; the items that
were added, removed or changed, ranked by how far each alone moved the CG,
with the highlighted one's fields old → new; and each envelope's status and
margin change with the caution. Enter on an item posts `JumpTo` (the App
shows its row in the ledger); `s` posts `Swap` (the App compares B with A).
The diff itself is computed by core in a worker thread before this opens.
"""

from __future__ import annotations

from rich.text import Text
from textual import on
from textual.binding import Binding
from textual.containers import Vertical, VerticalScroll
from textual.message import Message
from textual.screen import Screen
from textual.widgets import Footer, OptionList, Static, TabbedContent, TabPane
from textual.widgets.option_list import Option

from steelyard.core.history.diff import LedgerDiff
from steelyard.core.display import DisplayUnits
from steelyard.tui.state.compare_text import MAX_LISTED, Side, envelopes_text, heading, item_detail, item_line, totals_text

TABS = ("compare-totals", "compare-items", "compare-envelopes")


class CompareScreen(Screen[None]):
    BINDINGS = [
        Binding("escape,q", "close", "Back"),
        Binding("1", "tab(0)", "Totals"),
        Binding("2", "tab(1)", "Items"),
        Binding("3", "tab(2)", "Envelopes"),
        Binding("s", "swap", "Swap A/B"),
        Binding("f1,question_mark", "app.help", "Help"),
    ]

    class JumpTo(Message):
        def __init__(self, item_id: str) -> None:
            super().__init__()
            self.item_id = item_id

    class Swap(Message):
        pass

    def __init__(self, diff: LedgerDiff, a: Side, b: Side, du: DisplayUnits) -> None:
        super().__init__()
        self.diff, self.a, self.b, self.du = diff, a, b, du

    def compose(self):
        yield Static(Text("Compare", style="bold"), id="compare-title")
        yield Static(heading(self.diff, self.a, self.b), id="compare-heading")
        with TabbedContent(id="compare-tabs"):
            with TabPane("1 Totals", id=TABS[0]):
                with VerticalScroll():
                    yield Static(totals_text(self.diff, self.du), id="compare-totals-text")
            with TabPane("2 Items", id=TABS[1]):
                with Vertical():
                    yield Static(self._items_title(), id="compare-items-title")
                    yield OptionList(id="compare-list")
                    yield Static("", id="compare-detail")
            with TabPane("3 Envelopes", id=TABS[2]):
                with VerticalScroll():
                    yield Static(envelopes_text(self.diff, self.du), id="compare-envelopes-text")
        yield Footer()

    def _items_title(self) -> Text:
        n = len(self.diff.ranked)
        t = Text("Ranked by how far each item alone moves A's CG", style="bold")
        if n > MAX_LISTED:
            t.append(f" (first {MAX_LISTED} of {n:,}; steelyard diff lists all)", style="dim")
        where = "B" if self.b.working else "A" if self.a.working else None
        t.append("\nEnter: show the item in the ledger" if where else "\nneither side is the ledger being edited",
                 style="dim")
        return t

    def on_mount(self) -> None:
        box = self.query_one("#compare-list", OptionList)
        width = max(40, self.app.size.width - 6)
        box.add_options([Option(Text(item_line(e, self.diff, self.du, width)), id=f"r{k}")
                         for k, e in enumerate(self.diff.ranked[:MAX_LISTED])])
        if box.option_count:
            box.highlighted = 0
        else:
            self.query_one("#compare-detail", Static).update("No item was added, removed or changed.")
        self.query_one(TabbedContent).focus()

    @property
    def tab(self) -> str:
        return self.query_one(TabbedContent).active

    def action_tab(self, k: int) -> None:
        self.query_one(TabbedContent).active = TABS[k]
        if k == 1:
            self.query_one("#compare-list").focus()
        else:
            self.query_one(f"#{TABS[k]} VerticalScroll").focus()

    @on(OptionList.OptionHighlighted, "#compare-list")
    def _highlighted(self, event: OptionList.OptionHighlighted) -> None:
        e = self.diff.ranked[int(event.option.id[1:])]
        self.query_one("#compare-detail", Static).update(item_detail(e, self.diff, self.du))

    @on(OptionList.OptionSelected, "#compare-list")
    def _selected(self, event: OptionList.OptionSelected) -> None:
        e = self.diff.ranked[int(event.option.id[1:])]
        self.post_message(self.JumpTo(e.id))

    def action_swap(self) -> None:
        self.post_message(self.Swap())

    def action_close(self) -> None:
        self.dismiss(None)
