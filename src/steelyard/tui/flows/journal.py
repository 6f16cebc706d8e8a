"""The App's journal steps: offer to restore unsaved edits on open, then journal every edit.

Called once the file's lock is ours (after opening, or after taking over a
stale lock). With a journal waiting, the user sees what it holds and
chooses: restore (rebuilt in a worker thread, behind a progress screen, so
no key can edit the ledger meanwhile), discard (asked twice), or decide
later (the file stays read-only and the journal untouched). The session
does the journaling itself (`Session.apply` / `undo` / `redo`).
"""

from __future__ import annotations

from textual import work

from steelyard.core.errors import SteelyardError
import steelyard.io.durability.journal as J
from steelyard.tui.screens.confirm import ConfirmScreen
from steelyard.tui.screens.journal_restore import rebuilt_history
from steelyard.tui.screens.loading_screen import LoadingScreen
from steelyard.tui.messages import Restored
from steelyard.tui.screens.restore_screen import RestoreScreen
from steelyard.tui.state.assembly import placed_reader
from steelyard.tui.text import clean

LATER = ("unsaved edits of an earlier session wait in the journal; reopen the file to restore or "
         "discard them")


class JournalFlows:
    """Needs `self.session`, `self.refresh_views()` and `self.update_title()` from the App."""

    def start_journal(self) -> None:
        """Offer a waiting journal, or start a fresh one (a writable session on a file only)."""
        s = self.session
        if s is None or s.path is None or s.read_only:
            return
        try:
            state = s.pending_journal()
        except SteelyardError as exc:
            s.journal_error = f"edits are not journaled: {exc}"
            self._journal_warning()
            return
        if state is None:
            s.open_journal()
            self._journal_warning()
            return
        if state.in_use:
            s.journal_hold = "another live editor is writing this file's journal"
            self.notify(f"{s.journal_hold}: opened read-only.", severity="warning", markup=False, timeout=8)
            self.update_title()
            self.refresh_views()
            return
        self.push_screen(RestoreScreen(state, clean(s.name)), lambda answer: self._restore_answer(state, answer))

    def _restore_answer(self, state: J.JournalState, answer: str | None) -> None:
        s = self.session
        if answer == "restore":
            self._loading = LoadingScreen("unsaved edits from the journal")
            self.push_screen(self._loading)
            self._restore_worker(s, state)
            return
        if answer == "discard":
            def sure(choice: str | None) -> None:
                if choice == "discard":
                    J.discard(s.path)
                    s.open_journal()
                    self.notify("Unsaved edits discarded.", markup=False, timeout=4)
                    self._journal_warning()
                else:
                    self.start_journal()  # ask again

            n = len(state.records)
            self.push_screen(ConfirmScreen(f"Throw away {n} unsaved edit{'s' if n != 1 else ''} for good?",
                                           [("discard", "Discard"), ("back", "Back")], title="Discard edits"), sure)
            return
        s.journal_hold = LATER
        self.notify("The unsaved edits are kept in the journal; this file is read-only until you reopen it "
                    "and choose.", severity="warning", markup=False, timeout=8)
        self.update_title()
        self.refresh_views()

    @work(thread=True, exclusive=True, group="restore", description="restore unsaved edits")
    def _restore_worker(self, session, state: J.JournalState) -> None:
        try:
            history = rebuilt_history(session.saved, state.records, author=session.author,
                                      children=placed_reader(session.path))
        except SteelyardError as exc:
            self.post_message(Restored(session, state, None, str(exc)))
            return
        self.post_message(Restored(session, state, history, None))

    def on_restored(self, message: Restored) -> None:
        self._close_loading()
        s = self.session
        if s is not message.session:
            return
        if message.history is None:
            s.journal_hold = f"the journal could not be restored ({message.error}); it is kept as it is"
            self.notify(message.error, title="Not restored", severity="error", markup=False, timeout=10)
            self.update_title()
            self.refresh_views()
            return
        try:
            s.restored(message.history, message.state)
        except SteelyardError as exc:
            s.journal_error = f"edits are not journaled: {exc}"
        n = len(message.state.records)
        self.notify(f"Restored {n} unsaved edit{'s' if n != 1 else ''}; save to keep them in the file.",
                    markup=False, timeout=6)
        self._journal_warning()
        self.refresh_views()

    def _journal_warning(self) -> None:
        """Say once when edits stop being journaled."""
        s = self.session
        if s is None:
            return
        problem = s.journal_error
        if problem and problem != getattr(self, "_journal_said", None):
            self.notify(problem, title="Journal", severity="warning", markup=False, timeout=10)
        self._journal_said = problem
