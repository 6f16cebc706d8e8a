"""The steelyard full-screen editor: wiring only.

The main screen shows the numbers, the session holds the state, the flows
(`file_flows`, `edit_flows`, `journal_flows`, `compare_flows`,
`weighing_flows`) turn keys into dialogs and edits. This module connects
them: what happens after a change (repaint, fresh group subtotals and chart
extras in worker threads, the title) and the command palette's entries.
"""

from __future__ import annotations

import asyncio
import signal
from collections.abc import Iterable

from textual import work
from textual.app import App, SystemCommand
from textual.screen import Screen

from steelyard.core.errors import SteelyardError
from steelyard.tui.widgets.chart_extras import ChartExtras, chart_extras
from steelyard.tui.flows.assembly import AssemblyFlows
from steelyard.tui.flows.compare import CompareFlows
from steelyard.tui.flows.edit import EditFlows
from steelyard.tui.flows.file import FileFlows, groups_of
from steelyard.tui.flows.journal import JournalFlows
from steelyard.tui.flows.revision import RevisionFlows
from steelyard.tui.flows.setup import SetupFlows
from steelyard.tui.key_hold import KeyHold
from steelyard.tui.screens.main_screen import MainScreen
from steelyard.tui.messages import ExtrasReady, SubtotalsReady
from steelyard.tui.state.session import Session

#: (title, help, action) for the command palette (ctrl+p)
PALETTE = (
    ("Add item", "add an item with the form", "add"),
    ("Edit item", "edit the item under the cursor", "edit"),
    ("Duplicate item", "copy the item under the cursor", "duplicate"),
    ("Delete item", "delete the item under the cursor", "delete"),
    ("Move item to group", "put the item under the cursor in another group", "move"),
    ("Undo", "undo the last change", "undo"),
    ("Redo", "redo the last undone change", "redo"),
    ("Save", "save the ledger", "save"),
    ("Save as", "save the ledger under another name", "save_as"),
    ("Open ledger", "open another ledger file", "open"),
    ("Loadout", "choose the loadout, edit amounts", "loadout"),
    ("Compare…", "with another loadout, the saved ledger, a file or a snapshot", "compare"),
    ("Set-up tables", "loadouts, envelopes, limits, allocations, MAC, fuel, growth", "setup"),
    ("Units and frame", "the file's units and body axes (a ledger without entries)", "units_frame"),
    ("Weighing form", "scale readings and tares → empty mass and CG", "weighing"),
    ("Mass history", "mass, predicted mass and allocation at each commit (git)", "trend"),
    ("Switch units", "file units, SI, US customary", "units"),
    ("Choose units", "mass, length and inertia units, saved for you", "choose_units"),
    ("Show ledger", "the item table", "view:ledger"),
    ("Show totals", "mass, CG, inertia, principal axes", "view:totals"),
    ("Show envelopes", "envelope status, chart and caution", "view:envelopes"),
    ("Show change log", "who changed what, and its effect", "view:log"),
    ("Next sequence", "chart the next burn or drop sequence of this loadout", "view-action:sequence"),
    ("Filter items", "filter the table by text", "view-action:filter"),
    ("Sort", "sort the table by the next column", "view-action:sort"),
    ("Open placed file", "open the file a placement places here, in place (Backspace: back)", "open_assembly"),
    ("Back to the parent file", "leave the placed file opened here", "back"),
    ("Placements", "add, move or remove a placement of another ledger file ([[assembly]])", "placement"),
    ("Help: keys", "every key of the editor", "help"),
)


class SteelyardApp(KeyHold, AssemblyFlows, SetupFlows, RevisionFlows, FileFlows, EditFlows, JournalFlows, CompareFlows,
                   App[int]):
    CSS_PATH = "app.tcss"
    TITLE = "steelyard"
    SUB_TITLE = "steelyard"

    def __init__(self, path: str | None = None) -> None:
        super().__init__()
        self.path = path  # None: the bundled demo, opened as an unsaved copy
        self.session: Session | None = None

    def get_default_screen(self) -> Screen:
        return MainScreen()

    @property
    def main(self) -> MainScreen:
        return self.screen_stack[0]

    def on_mount(self) -> None:
        self.title = "loading…"
        if not self.is_headless:
            self._on_hangup()
        self.start_load(self.path, first=True)

    def _on_hangup(self) -> None:
        """A dropped SSH connection (SIGHUP) or a kill (SIGTERM) still releases the lock."""
        try:
            loop = asyncio.get_running_loop()
            for sig in (signal.SIGHUP, signal.SIGTERM):
                loop.add_signal_handler(sig, self._hung_up, sig)
        except (NotImplementedError, AttributeError, RuntimeError):  # pragma: no cover - not POSIX
            pass

    def _hung_up(self, sig: int) -> None:
        if self.session is not None:
            self.session.release_lock()
        self.exit(return_code=128 + int(sig))

    def on_unmount(self) -> None:
        if self.session is not None:
            self.session.release_lock()

    # ----------------------------------------------------------- repainting
    def refresh_views(self, groups=None, focus_item: str | None = None) -> None:
        """Push the session's numbers to every view, then refresh group subtotals off-thread."""
        s = self.session
        if s is None:
            return
        if groups is None:  # an edit: totals first, the table right after they are on screen
            self.main.show(s, totals_only=True)
            self.call_after_refresh(self._refresh_table, s.ledger, focus_item)
        else:
            self.main.show(s, groups)
            self._focus(focus_item)
        self.update_title()
        self.after_refresh_loadout()
        self.after_refresh_setup()

    def _refresh_table(self, ledger, focus_item: str | None) -> None:
        """After an edit's totals are on screen: enter it in the change log, redraw the table, and
        start fresh group subtotals (a worker thread holding the GIL would delay the totals' paint)."""
        s = self.session
        if s is None:
            return
        try:
            s.flush()
        except SteelyardError as exc:
            self.notify(str(exc), severity="error", markup=False)
        if s.ledger is ledger:
            self.main.show_table(s)
            self._focus(focus_item)
            self._subtotals_worker(s.ledger, s.loadout, s.totals().state)

    def _focus(self, item_id: str | None) -> None:
        if item_id is not None and item_id in self.session.ledger.index:
            self.main.table.go_to_item(item_id)

    def update_title(self) -> None:
        if self.session is not None:
            self.title = self.session.title() + self.assembly_trail()

    @work(thread=True, exclusive=True, group="subtotals", description="group subtotals")
    def _subtotals_worker(self, ledger, loadout, state) -> None:
        self.post_message(SubtotalsReady(ledger, loadout, groups_of(ledger, state)))

    def on_subtotals_ready(self, message: SubtotalsReady) -> None:
        s = self.session
        if s is not None and message.ledger is s.ledger and message.loadout == s.loadout:
            table = self.main.table
            first = getattr(self, "_first_groups", None) is s.ledger and table.cursor == 0
            self.main.show(s, message.groups)
            if first:  # the group rows arrived after the first paint: stay at the top, not on the item
                self._first_groups = None
                table._set_cursor(0)

    def on_main_screen_extras_wanted(self, message: MainScreen.ExtrasWanted) -> None:
        s = self.session
        if s is None:
            return
        key = (s.ledger, s.loadout)
        if getattr(self, "_extras_asked", None) == key:
            return  # already being computed
        self._extras_asked = key
        self._extras_worker(s.ledger, s.loadout, s.totals().state)

    @work(thread=True, exclusive=True, group="extras", description="sequence paths and CG uncertainty")
    def _extras_worker(self, ledger, loadout, state) -> None:
        try:
            extras = chart_extras(ledger, loadout, state)
        except Exception as exc:  # a fault here must not end the editing session
            extras = ChartExtras(ledger, loadout, sequence_error=f"cannot compute ({type(exc).__name__}: {exc})")
        self.post_message(ExtrasReady(extras))

    def on_extras_ready(self, message: ExtrasReady) -> None:
        s = self.session
        e = message.extras
        if s is None or e.ledger is not s.ledger or e.loadout != s.loadout:
            return
        s.extras = e
        if self.main.view == "envelopes":
            self.main.show(s, totals_only=True)

    # ------------------------------------------------------- command palette
    def get_system_commands(self, screen: Screen) -> Iterable[SystemCommand]:
        yield from super().get_system_commands(screen)
        for title, text, action in PALETTE:
            yield SystemCommand(title, text, self._palette_callback(action))

    def _palette_callback(self, action: str):
        def run() -> None:
            if action.startswith("view:"):
                self.main.action_view(action[5:])
            elif action.startswith("view-action:"):
                getattr(self.main, f"action_{action[12:]}")()
            else:
                self.call_later(getattr(self, f"action_{action}"))  # awaited when async (forms await their mount)
        return run
