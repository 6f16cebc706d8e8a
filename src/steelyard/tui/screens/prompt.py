"""A one-line question answered by typing: a file name, a group path."""

from __future__ import annotations

from rich.text import Text
from textual.binding import Binding
from textual.containers import Vertical
from textual.screen import ModalScreen
from textual.widgets import Input, Static

from steelyard.tui.screens.answered_in_order import KEYS, InOrder
from steelyard.tui.text import clean
from steelyard.tui.widgets.ordered_input import OrderedInput


class TextPrompt(InOrder, ModalScreen[str | None]):
    """Enter answers (the text, stripped), Escape gives None."""
    TAKES_KEYS_TYPED_AHEAD = True  # keys typed while it was coming answer it (tui/key_hold.py)

    # Tab moves focus, Enter and Escape close, in the order keys arrive (see screens.answered_in_order)
    BINDINGS = [*KEYS, Binding("escape", "cancel", "Cancel"),
                Binding("tab", "app.focus_next", "Next field", show=False, priority=True),
                Binding("shift+tab", "app.focus_previous", "Previous field", show=False, priority=True)]

    def __init__(self, title: str, value: str = "", *, hint: str = "", placeholder: str = "") -> None:
        super().__init__()
        self.heading, self.value, self.hint, self.placeholder = title, value, hint, placeholder

    def compose(self):
        with Vertical(classes="dialog"):
            yield Static(Text(self.heading, style="bold"), classes="dialog-title")
            if self.hint:
                yield Static(Text(clean(self.hint), style="dim"), classes="dialog-text")
            yield OrderedInput(self.value, placeholder=self.placeholder, id="prompt-input")
            yield Static("Enter to accept, Escape to cancel", classes="dialog-text")

    def on_mount(self) -> None:
        self.query_one(Input).focus()

    async def entered(self) -> None:
        self.dismiss(self.query_one(Input).value.strip())

    def action_cancel(self) -> None:
        self.dismiss(None)
