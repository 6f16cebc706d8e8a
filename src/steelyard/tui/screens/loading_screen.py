"""Shown while a ledger loads in a thread: what is happening and how far along."""

from __future__ import annotations

from rich.text import Text
from textual.containers import Vertical
from textual.screen import ModalScreen
from textual.widgets import ProgressBar, Static

from steelyard.tui.text import clean


class LoadingScreen(ModalScreen[None]):
    DEFAULT_CSS = """
    LoadingScreen { background: $background; }
    #load-phase { height: 1; }
    """

    def __init__(self, what: str) -> None:
        super().__init__()
        self.what = what
        self.phase = "reading"

    def compose(self):
        with Vertical(classes="dialog"):
            yield Static(Text("Opening ", style="bold") + Text(clean(self.what)), classes="dialog-title")
            yield Static(self.phase, id="load-phase", classes="dialog-text")
            yield ProgressBar(total=100, show_eta=False, id="load-bar")

    def progress(self, phase: str, fraction: float | None) -> None:
        """Repaint only what changed, without laying the screen out again: this runs while the
        reader holds the GIL, and the screen thread's work adds to the time the load takes."""
        if phase != self.phase:
            self.phase = phase
            self.query_one("#load-phase", Static).update(Text(clean(phase)), layout=False)  # one line, height 1
        if fraction is not None:
            self.query_one(ProgressBar).update(progress=round(100 * fraction))
