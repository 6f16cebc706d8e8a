"""Git in the editor: FILE@REV opened read-only, and the mass history screen.

A revision is history: it is shown and can be saved elsewhere (Save as),
but never written back, so no lock is taken, no journal is kept, and the
session is read-only from the start. Everything else (a plain path, the
demo, a new file) goes the usual way through `FileFlows`.
"""

from __future__ import annotations

from textual import work

from steelyard.core.errors import SteelyardError
from steelyard.core.loading.loadout import resolve
from steelyard.io.ledger.file import open_ledger
from steelyard.io.vcs.ledger_at import RevisionLedger
from steelyard.io.vcs.revision import names_revision, revision_of, split_revision
from steelyard.tui.flows.file import groups_of
from steelyard.tui.messages import Loaded, LoadFailed
from steelyard.tui.screens.loading_screen import LoadingScreen
from steelyard.tui.state.session import Session


def is_revision(path: str) -> bool:
    """FILE@REV for the editor; a missing file with '@' in its name that git cannot read is a new file."""
    if split_revision(path) is None:
        return False
    if names_revision(path):
        return True
    try:
        return revision_of(path) is not None
    except SteelyardError:
        return False


class RevisionFlows:
    """Put before `FileFlows` in the App's bases: it takes FILE@REV loads and hands the rest on."""

    def start_load(self, path: str | None, *, first: bool) -> None:
        if path is None or not is_revision(path):
            super().start_load(path, first=first)
            return
        self._loading = LoadingScreen(path)
        self.push_screen(self._loading)
        self.call_after_refresh(self._revision_worker, path, first)

    @work(thread=True, exclusive=True, group="load", description="load ledger at a revision")
    def _revision_worker(self, path: str, first: bool) -> None:
        try:
            loaded = open_ledger(path)
            try:
                state = resolve(loaded.ledger, None)
            except SteelyardError:
                state = None
            groups = groups_of(loaded.ledger, state)
        except SteelyardError as exc:
            self.post_message(LoadFailed(str(exc), first))
            return
        self.post_message(Loaded(loaded, False, groups, path))

    def on_loaded(self, message: Loaded) -> None:
        """A revision becomes a read-only session; any other load is left to `FileFlows.on_loaded`."""
        loaded = message.loaded
        if not isinstance(loaded, RevisionLedger):
            return
        message.prevent_default()  # FileFlows would take the lock and start a journal
        self._close_loading()
        if self.session is not None:
            self.session.close_journal(discard=True)
            self.session.release_lock()
        self.session = Session(loaded.ledger, loaded=loaded, path=message.path)
        rev = loaded.revision
        self.session.no_lock = (f"this is the file as committed at {rev.rev} ({rev.short}), never written back"
                                if rev is not None else "a file as committed is never written back")
        self.refresh_views(groups=message.groups)
        self.notify(f"Read-only: {self.session.no_lock}. Save as (W) writes a copy.", markup=False, timeout=8)
        self.update_title()

    def action_trend(self) -> None:
        """The mass history of the open file (from git), on its own screen."""
        from steelyard.tui.screens.trend_screen import TrendScreen

        s = self.session
        if s is None or s.path is None:
            self.notify("No file: the mass history comes from the git history of a saved ledger.", markup=False)
            return
        self.push_screen(TrendScreen(s.path, s.system))
