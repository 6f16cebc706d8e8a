"""The App's set-up actions: the set-up list, its forms, copy, delete, units and frame.

Every change ends in `EditFlows._apply`, the path an item edit takes: the
session journals it, makes it current and enters it in the change log
(action "loadout" for a loadout, so the log keeps its fields; "setup" for
the other tables, units and frame), and undo / redo work on it.
"""

from __future__ import annotations

from rich.text import Text  # noqa: F401 (the preview's type)

from steelyard.core.errors import SteelyardError
from steelyard.tui.screens.confirm import ConfirmScreen
from steelyard.tui.screens.setup_form import SetupDone, SetupForm, summary_of
from steelyard.tui.screens.setup_screen import SetupScreen
from steelyard.tui.screens.setup_units import UnitsDone, UnitsForm
from steelyard.tui.state.setup_preview import effect_lines
from steelyard.tui.state.setup_tables import SINGLE, copied, entries, entry_name, with_entry
from steelyard.tui.text import clean


class SetupFlows:
    """Needs `self.session`, `_may_edit`, `_apply` and `refresh_views` (EditFlows, the App)."""

    def action_setup(self) -> None:
        if self._may_edit(write=False):
            self.push_screen(SetupScreen(self.session.ledger))

    def action_units_frame(self) -> None:
        if self._may_edit():
            self.push_screen(UnitsForm(self.session.ledger), self._units_done)

    def new_ledger_setup(self) -> None:
        """A file that does not exist yet: ask for its units and frame first."""
        if self._may_edit(write=False) and not self.session.read_only:
            self.push_screen(UnitsForm(self.session.ledger, new=True), self._units_done)

    def _units_done(self, done: UnitsDone | None) -> None:
        if done is not None and self.session is not None:
            self._apply(done.ledger, action="setup", item=None, summary=done.summary)

    def _setup_preview(self, kind: str):
        def preview(new_ledger, name: str | None) -> Text:
            s = self.session
            return effect_lines(kind, name, new_ledger, s.loadout, s.units)
        return preview

    def on_setup_screen_chosen(self, event: SetupScreen.Chosen) -> None:
        if event.what == "units":
            self.action_units_frame()
            return
        if not self._may_edit():
            return
        kind, at = event.kind, event.at
        if event.what == "edit":
            self.push_screen(SetupForm(self.session.ledger, kind, at, self._setup_preview(kind)), self._setup_done)
        elif event.what == "copy":
            try:
                new, name = copied(self.session.ledger, kind, at)
            except SteelyardError as exc:
                self.notify(str(exc), severity="error", markup=False)
                return
            old = entry_name(kind, entries(self.session.ledger, kind)[at])
            self._apply(new, action=self._action(kind), item=name if kind == "loadout" else None,
                        summary=f"copied {kind} {old} as {name}")
        elif event.what == "delete":
            self._ask_delete(kind, at)

    def _ask_delete(self, kind: str, at: int) -> None:
        raw = entries(self.session.ledger, kind)[at]
        label = f"[{kind}]" if kind in SINGLE else f"{kind} {entry_name(kind, raw)}"

        def done(answer: str | None) -> None:
            if answer != "delete":
                return
            try:
                new = with_entry(self.session.ledger, kind, at, None)
            except SteelyardError as exc:  # still named by another table: say which, delete nothing
                self.notify(f"Cannot delete {label}: {exc}", severity="error", markup=False, timeout=8)
                return
            self._apply(new, action=self._action(kind), item=self._item(kind, raw),
                        summary=summary_of(kind, raw, None))

        self.push_screen(ConfirmScreen(f"Delete {clean(label)}? (Undo brings it back.)",
                                       [("delete", "Delete"), ("keep", "Keep it")]), done)

    @staticmethod
    def _action(kind: str) -> str:
        return "loadout" if kind == "loadout" else "setup"

    @staticmethod
    def _item(kind: str, raw: dict) -> str | None:
        return entry_name(kind, raw) if kind == "loadout" else None

    def _setup_done(self, done: SetupDone | None) -> None:
        if done is None or self.session is None:
            return
        self._apply(done.ledger, action=self._action(done.kind), item=done.name if done.kind == "loadout" else None,
                    summary=done.summary)

    def after_refresh_setup(self) -> None:
        for screen in self.screen_stack:
            if isinstance(screen, SetupScreen) and self.session is not None:
                screen.show(self.session.ledger)
