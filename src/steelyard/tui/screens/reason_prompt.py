"""The question a save asks when its changes carry no reason yet: why, and under which change request.

Both answers are optional: Enter with nothing typed saves without them. They
go into the `reason` and `request` keys of the `[[change]]` tables this save
writes (core.history.changes.History.annotate), and show in the log view,
the report and `steelyard diff`.
"""

from __future__ import annotations

from rich.text import Text
from textual.binding import Binding
from textual.containers import Vertical
from textual.screen import ModalScreen
from textual.widgets import Input, Static

from steelyard.tui.screens.answered_in_order import KEYS, InOrder
from steelyard.tui.widgets.ordered_input import OrderedInput


class ReasonPrompt(InOrder, ModalScreen[tuple[str, str] | None]):
    """Enter answers (reason, request), either maybe empty; Escape gives None (the save is not made)."""
    TAKES_KEYS_TYPED_AHEAD = True  # keys typed while it was coming answer it (tui/key_hold.py)

    # Tab moves focus, Enter and Escape close, in the order keys arrive (a burst or a paste over SSH lands
    # field by field, and what follows the Enter reaches the screen beneath: screens.answered_in_order)
    BINDINGS = [*KEYS, Binding("escape", "cancel", "Cancel"),
                Binding("tab", "app.focus_next", "Next field", show=False, priority=True),
                Binding("shift+tab", "app.focus_previous", "Previous field", show=False, priority=True)]

    def __init__(self, count: int) -> None:
        super().__init__()
        self.count = count

    def compose(self):
        what = "1 change" if self.count == 1 else f"{self.count} changes"
        with Vertical(classes="dialog"):
            yield Static(Text("Save: reason for the change", style="bold"), classes="dialog-title")
            yield Static(Text(f"Recorded with the {what} of this save. Optional: Enter skips.", style="dim"),
                         classes="dialog-text")
            yield Static("Reason (why):", classes="dialog-text")
            yield OrderedInput(placeholder="e.g. supplier data sheet rev C", id="reason-input")
            yield Static("Change request:", classes="dialog-text")
            yield OrderedInput(placeholder="e.g. CR-0107", id="request-input")
            yield Static("Enter to save, Tab for the next field, Escape to cancel", classes="dialog-text")

    def on_mount(self) -> None:
        self.query_one("#reason-input", Input).focus()

    async def entered(self) -> None:
        self.dismiss((self.query_one("#reason-input", Input).value.strip(),
                      self.query_one("#request-input", Input).value.strip()))

    def action_cancel(self) -> None:
        self.dismiss(None)
