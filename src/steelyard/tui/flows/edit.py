"""The App's editing actions: form, duplicate, delete, move, undo/redo, loadouts, units.

Each action asks a dialog for what the user wants, builds the new ledger
with `edits`, and hands it to the session (which records it in the change
log). Mixed into the App so that app.py stays a list of wiring.
"""

from __future__ import annotations

from rich.text import Text

from steelyard.core.errors import SteelyardError
from steelyard.tui.screens.confirm import ConfirmScreen
from steelyard.tui.state.edits import delete_item, duplicate_item, move_item, set_amount
from steelyard.tui.screens.help_screen import HelpScreen
from steelyard.tui.screens.item_form import FormResult, ItemForm
from steelyard.tui.widgets.ledger_table import LedgerTable
from steelyard.tui.screens.loadout_screen import LoadoutScreen, amount_text
from steelyard.tui.state.form_preview import FormPreview
from steelyard.tui.state.preview import preview_text
from steelyard.tui.screens.prompt import TextPrompt
from steelyard.tui.widgets.summary_strip import summary_text
from steelyard.tui.text import clean
from steelyard.tui.screens.weighing_form import WeighingDone, WeighingForm


class EditFlows:
    """Needs `self.session` and `self.refresh_views()` from the App."""

    def _may_edit(self, *, write: bool = True) -> bool:
        s = self.session
        if s is None:
            return False
        if write and s.read_only:
            self.notify(f"Read-only: {clean(s.read_only_reason())}. Use Save as (W) to keep your work "
                        "elsewhere.", severity="warning", markup=False)
            return False
        return True

    def _apply(self, ledger, *, action: str, item: str | None, summary: str) -> None:
        try:
            self.session.apply(ledger, action=action, item=item, summary=summary, defer=True)
        except SteelyardError as exc:
            self.notify(str(exc), severity="error", markup=False)
            return
        self._journal_warning()
        self.refresh_views(focus_item=item if action != "delete" else None)

    def _preview(self, new_ledger) -> Text:
        s = self.session
        return preview_text(s.totals(), s.totals_for(new_ledger), s.ledger.frame, s.units)

    def _form(self, original, **more) -> ItemForm:
        """The item form on the current ledger, its keystrokes previewed as a delta (`FormPreview`)."""
        s = self.session
        before = s.totals()
        delta = FormPreview(s.ledger, before, original)

        def quick(item) -> Text | None:
            after = delta.totals(item)
            return None if after is None else preview_text(before, after, s.ledger.frame, s.units)

        return ItemForm(s.ledger, original, self._preview, quick=quick, **more)

    def _current(self) -> str | None:
        """The item under the table's cursor; says so when the cursor is on a group row."""
        table = self.screen.query(LedgerTable)
        item_id = table.first().current_item_id if table else None
        if item_id is None and self.session is not None:
            self.notify("Put the cursor on an item row first (Enter on a group row folds it).",
                        markup=False, timeout=3)
        return item_id

    # ------------------------------------------------------------ the form
    # The form is awaited until mounted (its first field focused): the App takes the next key only
    # then, so keys typed or pasted right after `a` land in the form's first field, none lost.
    async def action_add(self) -> None:
        if self._may_edit():
            await self.push_screen(self._form(None), self._form_done)

    async def action_edit(self) -> None:
        item_id = self._current()
        if item_id is not None:
            await self.edit_item(item_id)

    async def edit_item(self, item_id: str) -> None:
        if self._may_edit() and not self.refuse_placed(item_id):
            item = self.session.ledger.item(item_id)
            await self.push_screen(self._form(item), self._form_done)

    async def on_ledger_table_edit_requested(self, event: LedgerTable.EditRequested) -> None:
        await self.edit_item(event.item_id)

    def _form_done(self, result: FormResult | None) -> None:
        if result is None or self.session is None:
            return
        if result.ledger is not None and self.session.ledger is not result.ledger:
            self._apply(result.ledger, action=result.action, item=result.item.id, summary=result.summary)

    # ------------------------------------------------------ other item edits
    def action_duplicate(self) -> None:
        item_id = self._current()
        if item_id is None or not self._may_edit():
            return
        if self.refuse_placed(item_id):
            return
        new, copy = duplicate_item(self.session.ledger, item_id)
        self._apply(new, action="duplicate", item=copy.id, summary=f"duplicated {item_id} as {copy.id}")

    def action_delete(self) -> None:
        item_id = self._current()
        if item_id is None or not self._may_edit() or self.refuse_placed(item_id):
            return

        def done(answer: str | None) -> None:
            if answer == "delete":
                self._apply(delete_item(self.session.ledger, item_id), action="delete", item=item_id,
                            summary=f"deleted {item_id}")

        self.push_screen(ConfirmScreen(f"Delete item {item_id}? (Undo brings it back.)",
                                       [("delete", "Delete"), ("keep", "Keep it")]), done)

    async def action_move(self) -> None:
        item_id = self._current()
        if item_id is None or not self._may_edit() or self.refuse_placed(item_id):
            return
        old = self.session.ledger.item(item_id).group

        def done(group: str | None) -> None:
            if group is None or group.strip().strip("/") == old:
                return
            new = move_item(self.session.ledger, item_id, group)
            self._apply(new, action="move", item=item_id,
                        summary=f"moved {item_id} from {old or '(no group)'} to {new.item(item_id).group or '(no group)'}")

        await self.push_screen(TextPrompt(f"Move {clean(item_id)} to group", old, hint="a '/' path such as "
                                    "power/storage; empty for no group"), done)

    def action_undo(self) -> None:
        if self._may_edit():
            self._stepped(self.session.undo(), "undo", "undid")

    def action_redo(self) -> None:
        if self._may_edit():
            self._stepped(self.session.redo(), "redo", "redid")

    def _stepped(self, change, verb: str, past: str) -> None:
        """Tell what an undo or redo did (or that there was nothing to do) and show the item it touched."""
        self._journal_warning()
        self.notify(f"nothing to {verb}" if change is None else f"{past}: {change.summary}", markup=False,
                    timeout=3)
        self.refresh_views(focus_item=None if change is None else change.item)

    # ------------------------------------------------------ loadouts, units
    async def action_loadout(self) -> None:
        if self._may_edit(write=False):
            s = self.session
            await self.push_screen(LoadoutScreen(s.ledger, s.loadout, s.units, self._summary()))

    def _summary(self) -> Text:
        s = self.session
        return summary_text(s.totals(), s.ledger.frame, s.units)

    def _loadout_screen(self) -> LoadoutScreen | None:
        return self.screen if isinstance(self.screen, LoadoutScreen) else None

    def on_loadout_screen_chosen(self, event: LoadoutScreen.Chosen) -> None:
        self.session.set_loadout(event.name)
        self.refresh_views()

    def on_loadout_screen_amount_set(self, event: LoadoutScreen.AmountSet) -> None:
        if not self._may_edit():
            return
        new = set_amount(self.session.ledger, event.loadout, event.item_id, event.amount)
        self._apply(new, action="loadout", item=event.loadout,
                    summary=f"{event.loadout}: {event.item_id} set to {amount_text(event.amount)}")

    def after_refresh_loadout(self) -> None:
        screen = self._loadout_screen()
        if screen is not None:
            s = self.session
            screen.show(s.ledger, s.loadout, s.units, self._summary())

    def action_units(self) -> None:
        if self._may_edit(write=False):
            self.session.cycle_units()
            self.refresh_views()

    def action_choose_units(self) -> None:
        if self._may_edit(write=False):
            from steelyard.tui.screens.units_screen import UnitsScreen

            self.push_screen(UnitsScreen(self.session.system), self._units_chosen)

    def _units_chosen(self, choice) -> None:
        if choice is None or self.session is None:
            return
        self.session.system = choice
        self.refresh_views()
        from steelyard.core.errors import SteelyardError
        from steelyard.io.user_settings import save_choice

        try:
            where = save_choice(choice)
        except SteelyardError as exc:
            self.notify(f"Units shown, but not saved: {exc}", markup=False, severity="warning", timeout=6)
            return
        self.notify(f"Units {choice.label} saved for you in {where}", markup=False, timeout=4)

    # ------------------------------------------------------------ weighing
    async def action_weighing(self) -> None:
        if self._may_edit():
            await self.push_screen(WeighingForm(self.session.ledger), self._weighing_done)

    def _weighing_done(self, done: WeighingDone | None) -> None:
        if done is None or self.session is None:
            return
        self._apply(done.ledger, action="weighing", item=done.item, summary=done.summary)
        self.notify(f"Empty vehicle replaced by the weighing: {done.summary}", markup=False, timeout=6)

    def action_help(self) -> None:
        self.push_screen(HelpScreen())
