"""The help screen: every key, from the same table the bindings are made of."""

from __future__ import annotations

from rich.text import Text
from textual.binding import Binding
from textual.containers import VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Static

from .keys import FORM_KEYS, LOADOUT_KEYS, MAIN_KEYS, OTHER_KEYS, TABLE_KEYS, pretty_keys


def help_text() -> Text:
    t = Text()
    t.append("steelyard — keys\n", style="bold")
    t.append("Everything works from the keyboard; Escape, q or F1 closes this screen.\n\n", style="dim")
    t.append("Main screen\n", style="bold underline")
    for keys, _action, _label, _show, text in MAIN_KEYS:
        t.append(f"  {pretty_keys(keys):<22}", style="bold")
        t.append(f"{text}\n")
    for title, rows in (("Ledger table", TABLE_KEYS), ("Item form", FORM_KEYS),
                        ("Loadout screen", LOADOUT_KEYS), ("Anywhere", OTHER_KEYS)):
        t.append(f"\n{title}\n", style="bold underline")
        for keys, text in rows:
            t.append(f"  {keys:<22}", style="bold")
            t.append(f"{text}\n")
    t.append("\nValues take units: '41.5 lb', '3 ft 2 in', '0.8 slug*ft**2'; a bare number is in the "
             "file's units. Status is always written in words (INSIDE / OUTSIDE), not only in colour.\n",
             style="dim")
    return t


class HelpScreen(ModalScreen[None]):
    BINDINGS = [Binding("escape,q,f1,question_mark", "close", "Close")]

    def compose(self):
        with VerticalScroll(id="help-box"):
            yield Static(help_text(), id="help-text")

    def on_mount(self) -> None:
        self.query_one("#help-box").focus()

    def action_close(self) -> None:
        self.dismiss(None)
