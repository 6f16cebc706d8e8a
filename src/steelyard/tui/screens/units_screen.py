"""Pick the display unit of each quantity (mass, length, inertia) over a system; saved per user.

Rows: the system (file, SI, US) and one row per quantity ("system" keeps the
system's unit). ↑↓ pick a row, ←→ change it, Enter takes it, Escape cancels.
What is taken is the person's own setting (io/user_settings.py), never the ledger's.
"""

from __future__ import annotations

from rich.text import Text
from textual.binding import Binding
from textual.containers import Vertical
from textual.screen import ModalScreen
from textual.widgets import Static

from steelyard.core.display import CHOICES, UnitChoice, pretty_unit

SYSTEMS = (None, "si", "us")
_SYSTEM_NAMES = {None: "file units", "si": "SI", "us": "US customary"}
ROWS = ("system", "mass", "length", "inertia")


class UnitsScreen(ModalScreen[UnitChoice | None]):
    """Dismisses with the UnitChoice shown when Enter is pressed, or None on Escape."""

    BINDINGS = [Binding("escape", "cancel", "Cancel"), Binding("enter", "take", "Take"),
                Binding("up,k", "row(-1)", show=False), Binding("down,j", "row(1)", show=False),
                Binding("left,h", "change(-1)", show=False), Binding("right,l,space", "change(1)", show=False)]

    def __init__(self, choice: UnitChoice) -> None:
        super().__init__()
        self.values = {"system": choice.system, "mass": choice.mass, "length": choice.length,
                       "inertia": choice.inertia}
        self.row = 0

    def compose(self):
        with Vertical(classes="dialog"):
            yield Static(Text("Display units", style="bold"), classes="dialog-title")
            yield Static("", id="units-rows", classes="dialog-text")
            yield Static("↑↓ row · ←→ change · Enter: take it (saved for you, not in the file) · Escape: cancel",
                         classes="dialog-text")

    def on_mount(self) -> None:
        self._paint()

    def options(self, row: str) -> tuple:
        return SYSTEMS if row == "system" else (None, *CHOICES[row])

    def label(self, row: str, value) -> str:
        if row == "system":
            return _SYSTEM_NAMES[value]
        return "as the system" if value is None else pretty_unit(value)

    def _paint(self) -> None:
        t = Text()
        for k, row in enumerate(ROWS):
            mark = "▸ " if k == self.row else "  "
            t.append(f"{mark}{row:<8} ", style="bold" if k == self.row else "")
            t.append(f"‹ {self.label(row, self.values[row])} ›\n", style="reverse" if k == self.row else "")
        self.query_one("#units-rows", Static).update(t)

    def action_row(self, step: int) -> None:
        self.row = (self.row + step) % len(ROWS)
        self._paint()

    def action_change(self, step: int) -> None:
        row = ROWS[self.row]
        opts = self.options(row)
        k = opts.index(self.values[row]) if self.values[row] in opts else 0
        self.values[row] = opts[(k + step) % len(opts)]
        self._paint()

    def choice(self) -> UnitChoice:
        return UnitChoice(**self.values)

    def action_take(self) -> None:
        self.dismiss(self.choice())

    def action_cancel(self) -> None:
        self.dismiss(None)
