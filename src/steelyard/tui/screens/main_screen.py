"""The main screen: status line, four views (ledger, totals, envelopes, log), footer.

It owns view state only (which view, filter, sort, folds, which envelope is
charted) and pushes the session's numbers into its widgets. Data actions
(edit, save, ...) are the App's: their bindings here say `app.<action>`.
"""

from __future__ import annotations

from rich.text import Text
from textual import on
from textual.binding import Binding
from textual.containers import Vertical
from textual.message import Message
from textual.screen import Screen
from textual.widgets import ContentSwitcher, Footer, Header, Input, Static

from steelyard.tui.widgets.envelope_panel import EnvelopePanel
from steelyard.tui.keys import MAIN_KEYS
from steelyard.tui.widgets.ledger_table import LedgerTable
from steelyard.tui.widgets.log_view import LogView
from steelyard.tui.state.shown import short_units
from steelyard.tui.widgets.summary_strip import SummaryStrip
from steelyard.tui.text import clean
from steelyard.tui.widgets.totals_panel import TotalsPanel

VIEW_ACTIONS = {"filter", "sort", "reverse_sort", "grouped", "fold_all", "view", "envelope", "sequence"}
VIEWS = ("ledger", "totals", "envelopes", "log")
SORT_WORDS = {"file": "file order"}


def _scoped(action: str) -> str:
    return action if action.split("(")[0] in VIEW_ACTIONS else f"app.{action}"


def _bindings() -> list[Binding]:
    out = []
    for keys, action, label, show, text in MAIN_KEYS:
        out.append(Binding(keys, _scoped(action), label, show=show, tooltip=text))
    out.append(Binding("escape", "leave_filter", "Back", show=False))
    # The same keys once more as priority bindings, so they run in the order keys arrive (see at_once);
    # the plain ones above still serve keys check_action leaves to a focused input (ctrl+s in the filter).
    for keys, action, _label, _show, _text in MAIN_KEYS:
        out.append(Binding(keys, f'at_once("{_scoped(action)}")', show=False, priority=True))
    out.append(Binding("enter", 'at_once("activate_row")', show=False, priority=True))
    return out


class MainFooter(Footer):
    """Textual's footer, not rebuilt while another screen covers the main one.

    Textual rebuilds it on every change of focus or of the screen stack; behind
    the loading dialog that is work on the screen thread, which shares the GIL
    with the file's reader, for keys nobody sees. Closing the covering screen
    changes the stack again, and the footer is rebuilt then."""

    async def recompose(self) -> None:
        if self.app.screen is self.screen:
            await super().recompose()


class MainScreen(Screen):
    BINDINGS = _bindings()

    class ExtrasWanted(Message):
        """The envelopes view needs sequence paths / uncertainty for the session's ledger now."""

    def __init__(self) -> None:
        super().__init__()
        self.session = None
        self.groups = None

    def compose(self):
        yield Header()
        yield Static("", id="status-line")
        yield Input(id="filter", placeholder="filter: text in id, name or group (Enter / Esc: back to table)",
                    compact=True)
        with ContentSwitcher(initial="ledger", id="views"):
            with Vertical(id="ledger"):
                yield LedgerTable(id="table")
                yield SummaryStrip(id="summary")
            yield TotalsPanel(id="totals")
            yield EnvelopePanel(id="envelopes")
            yield LogView(id="log")
        yield MainFooter()

    def on_mount(self) -> None:
        self.query_one("#filter").display = False
        self.query_one(LedgerTable).focus()

    @property
    def table(self) -> LedgerTable:
        return self.query_one(LedgerTable)

    @property
    def view(self) -> str:
        return self.query_one(ContentSwitcher).current or "ledger"

    # ------------------------------------------------------------ data down
    def show(self, session, groups=None, *, totals_only: bool = False) -> None:
        """Push the session's numbers into the widgets that are on screen (others on switch)."""
        self.session = session
        if groups is not None:
            self.groups = groups
        totals = session.totals()
        du = session.units
        ledger = session.ledger
        self.query_one(SummaryStrip).show(totals, ledger.frame, du)
        if not totals_only:
            self.table.show(ledger, totals.state, du, groups)
        self._status()
        self._panels(session)

    def show_table(self, session) -> None:
        """The table's share of `show`, for after the totals of an edit are on screen."""
        totals = session.totals()
        self.table.show(session.ledger, totals.state, session.units)
        self._status()

    def _panels(self, session) -> None:
        totals = session.totals()
        du = session.units
        ledger = session.ledger
        view = self.view
        if view == "totals":
            self.query_one(TotalsPanel).show(totals, ledger, du, session.system)
        elif view == "envelopes":
            extras = session.chart_extras()
            if extras is None or extras.ledger is not ledger:
                self.post_message(self.ExtrasWanted())  # computed in a worker; shown when ready
            self.query_one(EnvelopePanel).show(totals, ledger, du, session.other_points(), extras=extras)
        elif view == "log":
            session.flush()
            self.query_one(LogView).show(session.history, du)

    def _status(self) -> None:
        s = self.session
        if s is None:
            return
        spec = self.table.spec
        lo = "none" if s.loadout is None else clean(s.loadout)
        sort = SORT_WORDS.get(spec.sort, spec.sort) + (" (reversed)" if spec.descending else "")
        parts = [f"loadout {lo}", short_units(s.units, s.system), sort,
                 "grouped" if spec.grouped else "flat", f"{len(self.table.rows)} rows"]
        if spec.filter:
            parts.append(f"filter '{clean(spec.filter)}'")
        if s.read_only:
            parts.insert(0, "READ-ONLY")
        self.query_one("#status-line", Static).update(Text(" · ".join(parts)))

    # ----------------------------------------------------------- keys in order
    def check_action(self, action: str, parameters: tuple) -> bool | None:
        if action == "at_once":
            if parameters and parameters[0] == "activate_row":
                return isinstance(self.focused, LedgerTable)
            return not isinstance(self.focused, Input)  # letters typed into the filter are text
        return True

    async def action_at_once(self, action: str) -> None:
        """Run a main-screen key as it arrives, before the keys typed after it are routed.

        A plain binding runs only once its key has bubbled up from the table,
        and by then the keys typed after it have already been sent to the
        table, where they are lost or taken as commands. A priority binding
        runs in arrival order, and a key that opens a form awaits its mount
        (app.action_add), so the next key lands in the form's first field.
        """
        await self.run_action(action)

    async def action_activate_row(self) -> None:
        """Enter on the table: fold a group row, or open the item form (awaited, as `a` is)."""
        table = self.table
        if not len(table.rows):
            return
        ref = int(table.rows[table.cursor])
        if ref < 0:
            table.action_fold()
        else:
            await self.app.edit_item(table.ledger.items[ref].id)

    # ----------------------------------------------------------- view state
    def action_view(self, name: str) -> None:
        self.query_one(ContentSwitcher).current = name
        if name == "ledger":
            self.table.focus()
        else:
            self.query_one(f"#{name}").focus()
        if self.session is not None:
            self.show(self.session, totals_only=True)

    def reveal_item(self, item_id: str) -> None:
        """Show an item's row in the ledger view, clearing a filter or unfolding groups that hide it."""
        self.action_view("ledger")
        table = self.table
        table.go_to_item(item_id)
        if table.current_item_id != item_id:
            box = self.query_one("#filter", Input)
            box.value = ""
            box.display = False
            table.set_spec(filter="", folded=frozenset())
            table.go_to_item(item_id)
            self._status()
        table.focus()

    def action_envelope(self, step: int) -> None:
        if self.session is None:
            return
        panel = self.query_one(EnvelopePanel)
        panel.next_envelope(step, len(self.session.ledger.envelopes))
        if self.view != "envelopes":
            self.action_view("envelopes")
        else:
            self.show(self.session, totals_only=True)

    def action_sequence(self, step: int = 1) -> None:
        """Chart the next burn or drop sequence that starts from the active loadout."""
        if self.session is None:
            return
        self.query_one(EnvelopePanel).next_sequence(step)
        if self.view != "envelopes":
            self.action_view("envelopes")
        else:
            self.show(self.session, totals_only=True)
        extras = self.session.chart_extras()
        if extras is not None and not extras.sequences and extras.sequence_error is None:
            self.notify("No sequence starts from this loadout ([[sequence]] with loadout = …).", timeout=3,
                        markup=False)

    def action_filter(self) -> None:
        self.action_view("ledger")
        box = self.query_one("#filter", Input)
        box.display = True
        box.focus()

    def action_leave_filter(self) -> None:
        box = self.query_one("#filter", Input)
        if box.has_focus:
            box.value = ""
            box.display = False
        if self.view != "ledger":
            self.action_view("ledger")
        self.table.focus()

    @on(Input.Changed, "#filter")
    def _filter(self, event: Input.Changed) -> None:
        self.table.set_spec(filter=event.value.strip())
        self._status()

    @on(Input.Submitted, "#filter")
    def _filter_done(self, event: Input.Submitted) -> None:
        if not event.value.strip():
            self.query_one("#filter").display = False
        self.table.focus()

    def action_sort(self) -> None:
        key = self.table.cycle_sort()
        self.notify(f"sorted by {SORT_WORDS.get(key, key)}", timeout=2, markup=False)
        self._status()

    def action_reverse_sort(self) -> None:
        self.table.set_spec(descending=not self.table.spec.descending)
        self._status()

    def action_grouped(self) -> None:
        self.table.set_spec(grouped=not self.table.spec.grouped)
        self._status()

    def action_fold_all(self, fold: bool) -> None:
        self.table.fold_all(fold)
        self._status()
