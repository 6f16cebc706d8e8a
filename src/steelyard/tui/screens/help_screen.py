"""The help screen: every key, from the same table the bindings are made of."""

from __future__ import annotations

import textwrap

from rich.text import Text
from textual.binding import Binding
from textual.containers import VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Static

from steelyard.tui.keys import (COMPARE_KEYS, FORM_KEYS, LOADOUT_KEYS, MAIN_KEYS, OTHER_KEYS, RESTORE_KEYS, SETUP_KEYS,
                   TABLE_KEYS,
                   WEIGHING_KEYS, pretty_keys)


KEY_WIDTH = 22


def _row(t: Text, keys: str, text: str, width: int) -> None:
    """keys, then the description wrapped with a hanging indent, so it reads at 80 columns."""
    lines = textwrap.wrap(text, max(20, width - KEY_WIDTH - 2)) or [""]
    if len(keys) >= KEY_WIDTH:  # a long key list gets its own line
        t.append(f"  {keys}\n", style="bold")
        keys = ""
    t.append(f"  {keys:<{KEY_WIDTH}}", style="bold")
    t.append(lines[0] + "\n")
    for more in lines[1:]:
        t.append(" " * (KEY_WIDTH + 2) + more + "\n")


def help_text(width: int = 76) -> Text:
    t = Text()
    t.append("steelyard — keys\n", style="bold")
    t.append("Everything works from the keyboard; Escape, q or F1 closes this screen.\n\n", style="dim")
    t.append("Main screen\n", style="bold underline")
    for keys, _action, _label, _show, text in MAIN_KEYS:
        _row(t, pretty_keys(keys), text, width)
    for title, rows in (("Ledger table", TABLE_KEYS), ("Item form", FORM_KEYS),
                        ("Loadout screen", LOADOUT_KEYS), ("Compare screen", COMPARE_KEYS),
                        ("Weighing form", WEIGHING_KEYS),
                        ("Set-up list and forms", SETUP_KEYS), ("Unsaved edits found (journal)", RESTORE_KEYS),
                        ("Anywhere", OTHER_KEYS)):
        t.append(f"\n{title}\n", style="bold underline")
        for keys, text in rows:
            _row(t, keys, text, width)
    note = ("Values take units: '41.5 lb', '3 ft 2 in', '0.8 slug*ft**2'; a plain number is in the file's "
            "units. Envelope status is always written in words (INSIDE / OUTSIDE), never colour alone. "
            "The change log is saved in the ledger file as [[change]] tables. Every accepted edit is also "
            "journaled beside the file (.NAME.steelyard-journal) until it is saved.")
    t.append("\n" + "\n".join(textwrap.wrap(note, width)) + "\n", style="dim")
    return t


class HelpScreen(ModalScreen[None]):
    BINDINGS = [Binding("escape,q,f1,question_mark", "close", "Close")]

    def compose(self):
        with VerticalScroll(id="help-box"):
            yield Static(help_text(max(40, self.app.size.width - 6)), id="help-text")

    def on_mount(self) -> None:
        self.query_one("#help-box").focus()

    def action_close(self) -> None:
        self.dismiss(None)
