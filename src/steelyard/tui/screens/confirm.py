"""A question with a few answers, each on its own key and button."""

from __future__ import annotations

from rich.text import Text
from textual import on
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.screen import ModalScreen
from textual.widgets import Button, Static

from steelyard.tui.text import clean


class ConfirmScreen(ModalScreen[str]):
    """Dismisses with the chosen answer's key; Escape gives the last answer (the safe one)."""

    # Every key runs as it arrives (priority), so the keys typed after the answer reach the screen beneath
    # (see screens.answered_in_order): Tab moves between the answers, Enter takes the focused one.
    BINDINGS = [Binding("escape", "choose_last", "Cancel", priority=True),
                Binding("enter", "choose_focused", show=False, priority=True),
                Binding("tab", "app.focus_next", show=False, priority=True),
                Binding("shift+tab", "app.focus_previous", show=False, priority=True)]

    def __init__(self, question: str, answers: list[tuple[str, str]], *, title: str = "Please choose") -> None:
        super().__init__()
        self.question = question
        self.answers = answers  # (key, label); the last one is what Escape picks
        self.heading = title

    def compose(self):
        with Vertical(classes="dialog"):
            yield Static(Text(self.heading, style="bold"), classes="dialog-title")
            yield Static(Text(clean(self.question)), classes="dialog-text")
            with Horizontal(classes="dialog-buttons"):
                for key, label in self.answers:
                    yield Button(label, id=f"answer-{key}", compact=True)

    def on_mount(self) -> None:
        self.query(Button).first().focus()

    @on(Button.Pressed)
    def _pressed(self, event: Button.Pressed) -> None:  # a click
        self._choose(event.button)

    def action_choose_focused(self) -> None:
        if isinstance(self.focused, Button):
            self._choose(self.focused)

    def _choose(self, button: Button) -> None:
        if self.is_current:  # once: a click and a key may both arrive before the screen has gone
            self.dismiss((button.id or "answer-")[len("answer-"):])

    def action_choose_last(self) -> None:
        self.dismiss(self.answers[-1][0])
