"""The App's assembly actions: open a placed file in place and come back; add, move, remove a placement.

Opening a placed file (o) parks the parent's session (it keeps its lock and
journal) and loads the child through the ordinary file flow, so the child
gets its own lock, journal, undo and change log. Going back (Backspace)
asks about the child's unsaved work like quitting does, then, when the
child was saved, places its new contents in the parent with one splice per
placement (`Session.placed_file_saved`), never a re-read, and says how the
totals moved. A placement (A) is the parent's own data: its edits travel
like item edits (journal, change log, undo).
"""

from __future__ import annotations

import os
from dataclasses import dataclass

from textual import work

from steelyard.core.display import AXIS_NAMES, fmt, pretty_unit
from steelyard.core.errors import SteelyardError
from steelyard.tui.screens.assembly_form import AssemblyForm, PlacementResult
from steelyard.tui.screens.choice_screen import ChoiceScreen
from steelyard.tui.state.assembly import group_files, nested_saved, placement, refusal, top_of
from steelyard.tui.state.shown import signed
from steelyard.tui.text import clean
from steelyard.tui.widgets.ledger_table import LedgerTable


@dataclass
class ParentFrame:
    """A parent file parked while one of its placed files is open."""

    session: object  # tui.state.session.Session: keeps its lock and journal meanwhile
    assembly_id: str
    file: str  # as the parent places it (Placed.file)
    path: str  # the placed file on disk
    focus: str | None  # the row to come back to


class AssemblyFlows:
    """Needs the App's session, file flows (`start_load`, `save_steps`, `_ask`) and `refresh_views`."""

    _parents: list[ParentFrame]
    _opening_child: ParentFrame | None = None

    def _stack(self) -> list[ParentFrame]:
        if "_parents" not in self.__dict__:
            self._parents = []
        return self._parents

    def assembly_trail(self) -> str:
        """" (in quad-freighter.toml)" while a placed file is open: the title says where it sits."""
        stack = self._stack()
        if not stack:
            return ""
        return " — in " + " › ".join(clean(f.session.name) for f in reversed(stack))

    # ------------------------------------------------------- placed rows
    def refuse_placed(self, item_id: str) -> bool:
        """True (and an inline message) when `item_id` is a placed item: it belongs to another file."""
        s = self.session
        why = refusal(s.ledger, item_id) if s is not None else None
        if why is None:
            return False
        self.notify(clean(why), title="Read-only here", severity="warning", markup=False, timeout=8)
        return True

    def _row_placement(self) -> str | None:
        """The id of this file's placement under the table's cursor (item row or a placement's group row)."""
        s = self.session
        table = self.screen.query(LedgerTable)
        if s is None or not table:
            return None
        t = table.first()
        item_id = t.current_item_id
        if item_id is not None:
            q = top_of(s.ledger, s.ledger.index[item_id])
            return None if q is None else q.id
        group = t.current_group
        if group is None:
            return None
        files = group_files(s.ledger)
        for q in s.ledger.placed:
            if q.depth == 1:
                for path in files:
                    if files[path] == q.file and (group == path or group.startswith(path + "/")) and \
                            path.rsplit("/", 1)[-1] == q.id:
                        return q.id
        return None

    def _placements(self) -> list[tuple[str, str]]:
        s = self.session
        return [(q.id, f"{q.id}  ·  {q.file}  ({q.stop - q.start} items)") for q in s.ledger.placed if q.depth == 1]

    # ---------------------------------------------------------- open / back
    def action_open_assembly(self) -> None:
        s = self.session
        if s is None:
            return
        if not s.ledger.assemblies:
            self.notify("This ledger places no other file. A adds a placement ([[assembly]]).", markup=False,
                        timeout=5)
            return
        here = self._row_placement()
        if here is not None:
            self.open_placement(here)
            return
        self.push_screen(ChoiceScreen("Open a placed file", self._placements(),
                                      hint="It opens in place with its own lock and journal; Backspace comes back."),
                         lambda key: key and self.open_placement(key))

    def open_placement(self, assembly_id: str) -> None:
        s = self.session
        found = placement(s.ledger, assembly_id)
        if found is None:
            return
        _k, q = found
        if s.path is None:
            self.notify("Save this ledger first: its placed files are found from its folder.", markup=False)
            return
        path = os.path.normpath(os.path.join(os.path.dirname(os.path.abspath(s.path)), *q.file.split("/")))
        if not os.path.isfile(path):
            self.notify(f"{q.file}: no such file (placed as {q.id})", title="Cannot open", severity="error",
                        markup=False, timeout=8)
            return
        table = self.screen.query(LedgerTable)
        frame = ParentFrame(s, q.id, q.file, path, table.first().current_item_id if table else None)
        self._stack().append(frame)
        self._opening_child = frame
        self.session = None  # parked: the file flow must not close its journal or lock
        self.start_load(path, first=False)

    def on_loaded(self, message) -> None:
        frame, self._opening_child = self._opening_child, None
        if frame is not None:
            self.notify(f"Opened {frame.file}, placed in {frame.session.name} as {frame.assembly_id}. Edit and "
                        "save it here; Backspace goes back.", markup=False, timeout=6)

    def on_load_failed(self, message) -> None:
        frame, self._opening_child = self._opening_child, None
        if frame is not None and self._stack() and self._stack()[-1] is frame:
            self._stack().pop()
            self.session = frame.session
            self.refresh_views()

    def action_back(self) -> None:
        if not self._stack():
            self.notify("This is the top file: there is no parent to go back to.", markup=False, timeout=3)
            return
        self.hold_keys(self._back_worker())  # its question, if any, takes the keys typed next

    @work(exclusive=True, group="assembly-back", description="back to the parent file")
    async def _back_worker(self) -> None:
        await self.leave_child()

    async def leave_child(self) -> bool:
        """Ask about the open placed file's unsaved work, then show its parent again; False: the user stays."""
        s, frame = self.session, self._stack()[-1]
        if s is not None and s.dirty:
            choice = await self._ask(
                f"{s.name} has unsaved changes. Save them before going back to {frame.session.name}?",
                [("save", "Save"), ("discard", "Discard"), ("stay", "Stay")], "Unsaved work")
            if choice == "save":
                if not await self.save_steps(None):
                    return False
            elif choice != "discard":
                return False
        self._stack().pop()
        if s is not None:
            s.close_journal(discard=True)  # saved or discarded on purpose
            s.release_lock()
        parent = frame.session
        self.session = parent
        said = self._placed_saved(parent, frame, s)
        from steelyard.tui.flows.file import groups_of

        self.refresh_views(groups=groups_of(parent.ledger, parent.totals().state), focus_item=frame.focus)
        self.notify(said or f"Back in {parent.name}.", markup=False, timeout=8 if said else 3)
        return True

    def _placed_saved(self, parent, frame: ParentFrame, child) -> str:
        """Place the child's saved contents in the parent when they changed; the message saying so."""
        if child is None or child.loaded is None or child.path is None:
            return ""
        if os.path.realpath(child.path) != os.path.realpath(frame.path):
            return ""  # another file was opened meanwhile
        sha = child.loaded.sha256
        if any(q.file == frame.file and q.sha256 != sha for q in parent.ledger.placed if q.depth == 1):
            what = f"{frame.file} was saved"
        elif nested_saved(parent.ledger, frame.file, child.saved):  # a file placed in it, saved from there
            what = f"a file placed in {frame.file} was saved"
        else:
            return ""
        before = parent.totals()
        try:
            parent.placed_file_saved(frame.file, child.saved, sha)
        except SteelyardError as exc:
            return f"{what}, but {frame.file} cannot be placed again here ({exc}); reopen {parent.name}."
        after = parent.totals()
        if before.mp is None or after.mp is None:
            return f"{what}: {parent.name}'s totals are refreshed."
        du = parent.units
        mu, lu = pretty_unit(du.mass), pretty_unit(du.length)
        b, a = before.mp, after.mp
        cg = "  ".join(f"{AXIS_NAMES[k]} {fmt(du.l(a.cg[k]))} ({signed(du.l(a.cg[k] - b.cg[k]))})" for k in range(3))
        return (f"{what}: {parent.name} now {fmt(du.m(a.mass))} {mu} "
                f"({signed(du.m(a.mass - b.mass))} {mu}), CG {cg} {lu}.")

    async def action_quit(self) -> None:
        """Quitting from a placed file goes back through every parent first, asking about unsaved work."""
        if not self._stack():
            from steelyard.tui.flows.file import FileFlows

            await FileFlows.action_quit(self)
            return
        self.hold_keys(self._quit_tree_worker())

    @work(exclusive=True, group="quit")
    async def _quit_tree_worker(self) -> None:
        while self._stack():
            if not await self.leave_child():
                return
        if self.session is None or not self.session.dirty or await self._keep_work("quitting"):
            await self._quit_now()

    def on_unmount(self) -> None:
        for frame in self._stack():  # parked parents: their locks go; their journals stay for a restore
            frame.session.release_lock()

    # ---------------------------------------------------------- placements
    def action_placement(self) -> None:
        if not self._may_edit():
            return
        s = self.session
        if s.path is None:
            self.notify("Save this ledger first: a placed file's path is relative to it.", markup=False)
            return
        choices = [("+", "+ place another ledger file here")] + self._placements()
        self.push_screen(ChoiceScreen("Placements ([[assembly]])", choices, selected=self._row_placement(),
                                      hint="Enter: change or remove that placement, or add one."),
                         self._placement_chosen)

    def _placement_chosen(self, key: str | None) -> None:
        if key is None or self.session is None:
            return
        s = self.session
        original = None if key == "+" else placement(s.ledger, key)
        table = None if original is None else dict(s.ledger.assemblies[original[0]])
        self.push_screen(AssemblyForm(s.ledger, s.path, table, self._preview), self._placement_done)

    def _placement_done(self, result: PlacementResult | None) -> None:
        s = self.session
        if result is None or s is None or result.ledger is s.ledger:
            return
        try:
            s.apply(result.ledger, action="assembly", item=result.assembly_id, summary=result.summary, defer=True,
                    fields=(result.before, result.after))
        except SteelyardError as exc:
            self.notify(str(exc), severity="error", markup=False)
            return
        self._journal_warning()
        self.refresh_views()
        self.notify(result.summary, markup=False, timeout=5)
