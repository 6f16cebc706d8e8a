"""The set-up list: units and frame, loadouts, envelopes, limits, allocations, [mac], [fuel], [growth].

One line per entry, grouped by table, with a "+ new" line under each. Enter
opens the entry's form (or a new one), c copies, x / Delete deletes (asked
first), Escape goes back. The screen only says what the user chose (`Chosen`
messages); the App's set-up flow opens forms and applies edits, then calls
`show` with the new ledger.
"""

from __future__ import annotations

from rich.text import Text
from textual.binding import Binding
from textual.containers import Vertical
from textual.message import Message
from textual.screen import ModalScreen
from textual.widgets import OptionList, Static
from textual.widgets.option_list import Option

from steelyard.core.display import pretty_unit
from steelyard.core.document.model import Ledger
from steelyard.tui.state.setup_fields import TITLES
from steelyard.tui.state.setup_tables import KINDS, SINGLE, entries, entry_name
from steelyard.tui.text import clean

HEADINGS = {"loadout": "Loadouts", "envelope": "Envelopes", "limit": "Limits ([[limit]])",
            "allocation": "Allocations ([[allocation]])", "mac": "[mac]", "fuel": "[fuel]",
            "growth": "[growth] allowance by maturity"}


def _brief(kind: str, raw: dict) -> str:
    """A few words on an entry: its keys beyond the name."""
    from steelyard.io.ledger.toml_write import value

    parts = []
    for k, v in raw.items():
        if k in ("name", "user") or (k == "group" and kind == "allocation"):
            continue
        if k == "points":
            parts.append(f"{len(v)} points")
        elif k == "set":
            parts.append(f"{len(v)} amounts")
        else:
            parts.append(f"{k} = {value(v)}")
    text = ", ".join(parts)
    return text if len(text) <= 48 else text[:47] + "…"


class SetupScreen(ModalScreen[None]):
    DEFAULT_CSS = """
    SetupScreen { align: center middle; }
    #setup-list-box { width: 100%; max-width: 110; height: 100%; border: thick $primary; background: $surface;
                      padding: 0 1; }
    #setup-list { height: 1fr; }
    #setup-keys { height: auto; color: $text-muted; }
    """
    BINDINGS = [Binding("escape,q", "close", "Back"), Binding("c", "copy", "Copy"),
                Binding("x,delete", "delete", "Delete")]

    class Chosen(Message):
        """`what`: "edit" (at None: a new entry), "copy", "delete", or "units"."""

        def __init__(self, what: str, kind: str | None, at: int | None) -> None:
            super().__init__()
            self.what, self.kind, self.at = what, kind, at

    def __init__(self, ledger: Ledger) -> None:
        super().__init__()
        self.ledger = ledger

    def compose(self):
        with Vertical(id="setup-list-box"):
            yield Static(Text("Set-up", style="bold") + Text(" · the tables a ledger needs besides its items",
                                                            style="dim"))
            yield OptionList(id="setup-list")
            yield Static("enter: edit or add · c: copy · x / Del: delete · esc: back · "
                         "every change: undo (u), change log, journal", id="setup-keys")

    def on_mount(self) -> None:
        self.show(self.ledger)
        self.query_one(OptionList).focus()

    def show(self, ledger: Ledger) -> None:
        self.ledger = ledger
        ol = self.query_one(OptionList)
        keep = ol.highlighted_option.id if ol.highlighted_option is not None else None
        ol.clear_options()
        u, f = ledger.units, ledger.frame
        opts: list = [Option(Text("Units and frame: ", style="bold") + Text(
            f"{pretty_unit(u.mass)}, {pretty_unit(u.length)}, {pretty_unit(u.inertia)}; "
            f"x {f.x}, y {f.y}, z {f.z}"), id="units")]
        for kind in KINDS:
            opts.append(Option(Text(HEADINGS[kind], style="bold underline"), id=f"head:{kind}", disabled=True))
            tables = entries(ledger, kind)
            for at, raw in enumerate(tables):
                label = TITLES[kind] if kind in SINGLE else clean(entry_name(kind, raw))
                opts.append(Option(Text("  ") + Text(label, style="bold") + Text("  " + clean(_brief(kind, raw)),
                                                                                 style="dim"), id=f"{kind}:{at}"))
            if not (kind in SINGLE and tables):
                opts.append(Option(Text(f"  + new {TITLES[kind].lower() if kind not in SINGLE else '[' + kind + ']'}",
                                        style="italic"), id=f"{kind}:new"))
        ol.add_options(opts)
        ids = [o.id for o in opts]
        if keep in ids:
            ol.highlighted = ids.index(keep)
        elif ol.highlighted is None:
            ol.highlighted = 0

    def _current(self) -> tuple[str | None, int | None] | None:
        opt = self.query_one(OptionList).highlighted_option
        if opt is None or opt.id is None or opt.id.startswith("head:"):
            return None
        if opt.id == "units":
            return None, None
        kind, _, at = opt.id.partition(":")
        return kind, (None if at == "new" else int(at))

    def on_option_list_option_selected(self, event: OptionList.OptionSelected) -> None:
        cur = self._current()
        if cur is None:
            return
        kind, at = cur
        self.post_message(self.Chosen("units" if kind is None else "edit", kind, at))

    def action_copy(self) -> None:
        cur = self._current()
        if cur is not None and cur[0] is not None and cur[1] is not None:
            self.post_message(self.Chosen("copy", *cur))

    def action_delete(self) -> None:
        cur = self._current()
        if cur is not None and cur[0] is not None and cur[1] is not None:
            self.post_message(self.Chosen("delete", *cur))

    def action_close(self) -> None:
        self.dismiss(None)
