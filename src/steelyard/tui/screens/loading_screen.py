"""Shown while a ledger loads in a thread: what is happening and how far along."""

from __future__ import annotations

from rich.text import Text
from textual.containers import Vertical
from textual.screen import ModalScreen
from textual.widgets import ProgressBar, Static

from steelyard.tui.text import clean


class LoadingScreen(ModalScreen[None]):
    def __init__(self, what: str) -> None:
        super().__init__()
        self.what = what

    def compose(self):
        with Vertical(classes="dialog"):
            yield Static(Text("Opening ", style="bold") + Text(clean(self.what)), classes="dialog-title")
            yield Static("reading", id="load-phase", classes="dialog-text")
            yield ProgressBar(total=100, show_eta=False, id="load-bar")

    def progress(self, phase: str, fraction: float | None) -> None:
        self.query_one("#load-phase", Static).update(Text(clean(phase)))
        if fraction is not None:
            self.query_one(ProgressBar).update(progress=round(100 * fraction))
