"""The offer to restore unsaved edits found in the journal, showing what they are.

Dismisses with "restore", "discard" or "later". Escape is "later": nothing
is restored or thrown away, the file opens read-only and the journal stays
for the next time it is opened.
"""

from __future__ import annotations

from rich.text import Text
from textual import on
from textual.binding import Binding
from textual.containers import Horizontal, Vertical, VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Button, Static

from steelyard.io.durability.journal import JournalState
from steelyard.tui.screens.journal_restore import offer_lines


class RestoreScreen(ModalScreen[str]):
    BINDINGS = [Binding("escape", "later", "Decide later")]

    def __init__(self, state: JournalState, file_name: str) -> None:
        super().__init__()
        self.state = state
        self.file_name = file_name

    def compose(self):
        with Vertical(classes="dialog", id="restore-box"):
            yield Static(Text("Unsaved edits found: ", style="bold") + Text(self.file_name), classes="dialog-title")
            with VerticalScroll(id="restore-list"):
                yield Static(Text("\n".join(offer_lines(self.state))), id="restore-text")
            with Horizontal(classes="dialog-buttons"):
                yield Button("Restore" if self.state.matches else "Restore anyway", id="answer-restore",
                             compact=True)
                yield Button("Discard them", id="answer-discard", compact=True)
                yield Button("Later (read-only)", id="answer-later", compact=True)

    def on_mount(self) -> None:
        self.query_one("#answer-restore", Button).focus()

    @on(Button.Pressed)
    def _pressed(self, event: Button.Pressed) -> None:
        self.dismiss((event.button.id or "answer-later")[len("answer-"):])

    def action_later(self) -> None:
        self.dismiss("later")
