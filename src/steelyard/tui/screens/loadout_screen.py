"""Choose the loadout and type its amounts, with the totals repainting underneath.

Choosing applies at once (it is a view of the ledger, not a change to it);
an amount is a change and goes through the change log like any edit. The
screen only checks what was typed and posts messages; the App applies them
and pushes the new numbers back with `show`.
"""

from __future__ import annotations

from rich.text import Text
from textual import on
from textual.binding import Binding
from textual.containers import Vertical
from textual.message import Message
from textual.screen import ModalScreen
from textual.widgets import Input, OptionList, Static
from textual.widgets.option_list import Option

from steelyard.core.display import DisplayUnits, pretty_unit
from steelyard.core.errors import SteelyardError
from steelyard.core.loading.loadout import amount_fraction
from steelyard.core.document.model import Amount, Ledger
from steelyard.io.ledger.read import read_amount
from steelyard.tui.text import clean, literal
from steelyard.tui.widgets.ordered_input import OrderedInput

NONE_ID = "\x00none"


def parse_amount(ledger: Ledger, loadout: str, item_id: str, text: str) -> Amount | None:
    """Typed amount -> Amount (None: empty). Raises SteelyardError with a one-line reason."""
    s = text.strip()
    if not s:
        return None
    where = f"loadout {loadout!r}"
    value: object = s
    if s.endswith("%"):
        try:
            value = float(s[:-1]) / 100.0
        except ValueError:
            raise SteelyardError(f"cannot read {s!r} as a percentage", subject=where) from None
    else:
        try:
            value = float(s)
        except ValueError:
            pass
    amount = read_amount(value, "", where, f"set.{item_id}")
    amount_fraction(ledger, item_id, amount, where)
    return amount


def amount_text(amount: Amount | None) -> str:
    if amount is None:
        return "empty"
    if amount.kind == "fraction":
        return f"{amount.value * 100:g}% of full"
    return clean(amount.given or f"{amount.value:g} {'kg' if amount.kind == 'mass' else 'm³'}")


class LoadoutScreen(ModalScreen[None]):
    BINDINGS = [Binding("escape", "close", "Back")]

    class Chosen(Message):
        def __init__(self, name: str | None) -> None:
            super().__init__()
            self.name = name

    class AmountSet(Message):
        def __init__(self, loadout: str, item_id: str, amount: Amount | None, text: str) -> None:
            super().__init__()
            self.loadout, self.item_id, self.amount, self.text = loadout, item_id, amount, text

    def __init__(self, ledger: Ledger, active: str | None, du: DisplayUnits, summary: Text) -> None:
        super().__init__()
        self.ledger, self.active, self.du, self.summary = ledger, active, du, summary
        self.editing: str | None = None

    def compose(self):
        with Vertical(id="loadout-box"):
            yield Static(Text("Loadout", style="bold") + Text(
                "  ↑↓ Enter: use this loadout · Tab: its amounts · Esc: back", style="dim"))
            yield OptionList(id="loadouts")
            yield Static("", id="amounts-title")
            yield OptionList(id="amounts")
            yield OrderedInput(id="amount-input", compact=True,
                        placeholder="0.75 · 75% · 82 kg · 16 gal · empty for none")
            yield Static("", id="amount-message")
            yield Static("", id="loadout-summary")

    def on_mount(self) -> None:
        self.query_one("#amount-input").display = False
        self.show(self.ledger, self.active, self.du, self.summary)
        self.query_one("#loadouts").focus()

    def show(self, ledger: Ledger, active: str | None, du: DisplayUnits, summary: Text) -> None:
        """New ledger / active loadout / totals from the App."""
        self.ledger, self.active, self.du = ledger, active, du
        lol = self.query_one("#loadouts", OptionList)
        keep = lol.highlighted
        lol.clear_options()
        lol.add_option(Option(("● " if active is None else "  ") + "none (variable items empty)", id=NONE_ID))
        for k, lo in enumerate(ledger.loadouts):
            mark = "● " if lo.name == active else "  "
            lol.add_option(Option(literal(mark + lo.name), id=f"lo{k}"))
        if keep is None:
            keep = 0 if active is None else 1 + [lo.name for lo in ledger.loadouts].index(active)
        lol.highlighted = min(keep, lol.option_count - 1)
        self._amounts()
        self.query_one("#loadout-summary", Static).update(summary)

    def _amounts(self) -> None:
        title = self.query_one("#amounts-title", Static)
        al = self.query_one("#amounts", OptionList)
        keep = al.highlighted
        al.clear_options()
        if self.active is None:
            title.update("Amounts: choose a loadout first (none leaves every variable item empty)")
            return
        lo = self.ledger.loadout(self.active)
        title.update(Text("Amounts in ", style="bold") + literal(self.active)
                     + Text(" (Enter on a row to type a new amount)", style="dim"))
        mu = pretty_unit(self.du.mass)
        for k, it in enumerate(self.ledger.items):
            if not it.variable:
                continue
            full = self.du.num(it.mass * it.quantity, 'mass')
            label = f"{clean(it.id):<14} {amount_text(lo.set.get(it.id)):<18} full {full} {mu}  {clean(it.name)}"
            room = max(30, self.size.width - 6)
            if len(label) > room:
                label = label[: room - 1] + "…"
            al.add_option(Option(Text(label), id=f"it{k}"))
        if al.option_count:
            al.highlighted = 0 if keep is None else min(keep, al.option_count - 1)

    @on(OptionList.OptionSelected, "#loadouts")
    def _chosen(self, event: OptionList.OptionSelected) -> None:
        oid = event.option.id
        name = None if oid == NONE_ID else self.ledger.loadouts[int(oid[2:])].name
        self.post_message(self.Chosen(name))

    @on(OptionList.OptionSelected, "#amounts")
    def _pick_amount(self, event: OptionList.OptionSelected) -> None:
        item = self.ledger.items[int(event.option.id[2:])]
        self.editing = item.id
        box = self.query_one("#amount-input", Input)
        current = self.ledger.loadout(self.active).set.get(item.id)
        box.value = "" if current is None else (current.given or f"{current.value:g}")
        box.display = True
        box.focus()
        self.query_one("#amount-message", Static).update(literal(f"new amount for {item.id}:"))

    @on(Input.Changed, "#amount-input")
    def _check(self, event: Input.Changed) -> None:
        msg = self.query_one("#amount-message", Static)
        if self.editing is None:
            return
        try:
            parse_amount(self.ledger, self.active, self.editing, event.value)
        except SteelyardError as exc:
            msg.update(literal(f"✗ {exc.message}", style="bold"))
            return
        msg.update("✓ Enter to apply, Escape to leave it")

    @on(Input.Submitted, "#amount-input")
    def _submit(self, event: Input.Submitted) -> None:
        if self.editing is None:
            return
        try:
            amount = parse_amount(self.ledger, self.active, self.editing, event.value)
        except SteelyardError as exc:
            self.query_one("#amount-message", Static).update(literal(f"✗ {exc.message}", style="bold"))
            self.app.bell()
            return
        self.post_message(self.AmountSet(self.active, self.editing, amount, event.value.strip()))
        self._stop_editing()

    def _stop_editing(self) -> None:
        self.editing = None
        self.query_one("#amount-input").display = False
        self.query_one("#amount-message", Static).update("")
        self.query_one("#amounts").focus()

    def action_close(self) -> None:
        if self.editing is not None:
            self._stop_editing()
            return
        self.dismiss(None)
