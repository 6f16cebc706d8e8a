"""Pick one of a short list with the arrow keys and Enter (Escape: none)."""

from __future__ import annotations

from rich.text import Text
from textual import on
from textual.binding import Binding
from textual.containers import Vertical
from textual.screen import ModalScreen
from textual.widgets import OptionList, Static
from textual.widgets.option_list import Option

from steelyard.tui.text import clean


class ChoiceScreen(ModalScreen[str | None]):
    """Dismisses with the chosen entry's key, or None on Escape."""
    TAKES_KEYS_TYPED_AHEAD = True  # keys typed while it was coming answer it (tui/key_hold.py)

    BINDINGS = [Binding("escape", "cancel", "Cancel")]

    def __init__(self, title: str, choices: list[tuple[str, str]], *, hint: str = "",
                 selected: str | None = None) -> None:
        super().__init__()
        self.heading, self.choices, self.hint, self.selected = title, choices, hint, selected

    def compose(self):
        with Vertical(classes="dialog"):
            yield Static(Text(self.heading, style="bold"), classes="dialog-title")
            if self.hint:
                yield Static(Text(clean(self.hint), style="dim"), classes="dialog-text")
            yield OptionList(*(Option(Text(clean(label)), id=f"c{k}") for k, (_key, label) in enumerate(self.choices)),
                             id="choice-list")
            yield Static("↑↓ choose · Enter: take it · Escape: cancel", classes="dialog-text")

    def on_mount(self) -> None:
        box = self.query_one(OptionList)
        keys = [k for k, _ in self.choices]
        box.highlighted = keys.index(self.selected) if self.selected in keys else 0
        box.focus()

    @on(OptionList.OptionSelected)
    def _chosen(self, event: OptionList.OptionSelected) -> None:
        self.dismiss(self.choices[int(event.option.id[1:])][0])

    def action_cancel(self) -> None:
        self.dismiss(None)
