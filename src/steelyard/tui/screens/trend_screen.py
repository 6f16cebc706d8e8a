"""The ledger's mass history from git, read-only: the same table and chart as `steelyard trend`.

The history is read in a worker thread (one git log, one cat-file, each
distinct text parsed once); the screen shows "reading…" until it is ready,
or the one-line reason there is none (not in a repository, never committed).
"""

from __future__ import annotations

from rich.console import Group
from rich.text import Text
from textual import work
from textual.binding import Binding
from textual.containers import VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Static

from steelyard.io.report.trend_text import trend_renderables
from steelyard.core.display import DisplayUnits
from steelyard.core.document.model import FileUnits
from steelyard.core.errors import SteelyardError
from steelyard.io.vcs.ledger_at import trend_of


class TrendScreen(ModalScreen[None]):
    """History of `path` (a file, or FILE@REV) under the editor's unit system."""

    DEFAULT_CSS = """
    TrendScreen { align: center middle; }
    #trend-box { width: 100%; height: 100%; border: thick $primary; background: $surface; padding: 0 1; }
    """
    BINDINGS = [Binding("escape,q", "close", "Close")]

    def __init__(self, path: str, system: str | None = None) -> None:
        super().__init__()
        self.path, self.system = path, system

    def compose(self):
        with VerticalScroll(id="trend-box"):
            yield Static(Text(f"Mass history of {self.path}: reading the git history…"), id="trend-text")

    def on_mount(self) -> None:
        self.query_one("#trend-box").focus()
        self._read(self.size.width or self.app.size.width)

    @work(thread=True, exclusive=True, group="trend", description="read the mass history")
    def _read(self, width: int) -> None:
        try:
            t = trend_of(self.path)
            du = DisplayUnits.choose(t.units or FileUnits(), self.system)
            shown = Group(*trend_renderables(t, self.path, du, max(40, width - 4)),
                          Text("\nEscape or q closes this screen.", style="dim"))
        except SteelyardError as exc:
            shown = Text(f"No mass history: {exc}\n\nEscape or q closes this screen.")
        self.app.call_from_thread(self._show, shown)

    def _show(self, shown) -> None:
        if self.is_mounted:  # closed before the history was read: nothing to show
            self.query_one("#trend-text", Static).update(shown)

    def action_close(self) -> None:
        self.dismiss(None)
