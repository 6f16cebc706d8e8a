"""The App's file actions: load (in a thread, with progress), save, save as, open, quit.

Saving asks instead of overwriting: when the file changed on disk, when Save
as would replace another file, and when there is no file yet (the demo copy,
a new ledger). A save over the opened file keeps its comments and layout, so
there is nothing to ask about them. Quitting with unsaved work asks too. The lock is taken on open and released on quit.
"""

from __future__ import annotations

import asyncio
import gc
import os
import time

from contextlib import contextmanager

from operator import attrgetter

from textual import work

from steelyard.core.errors import SteelyardError
from steelyard.core.units import registry
from steelyard.core.physics.groups import subtotals
from steelyard.core.loading.loadout import resolve
from steelyard.core.document.model import Ledger
from steelyard.io.ledger.demo import demo_path
from steelyard.io.ledger.file import ChangedOnDisk, LoadedLedger, open_ledger
from steelyard.tui.screens.confirm import ConfirmScreen
from steelyard.tui.screens.loading_screen import LoadingScreen
from steelyard.tui.widgets.ledger_table import widest_texts
from steelyard.tui.widgets.log_view import when
from steelyard.tui.messages import Loaded, LoadFailed, LoadProgress
from steelyard.tui.screens.prompt import TextPrompt
from steelyard.tui.screens.reason_prompt import ReasonPrompt
from steelyard.tui.state.session import Session
from steelyard.tui.text import clean


def groups_of(ledger: Ledger, state) -> list:
    """Group subtotals from core (run in a worker thread for big ledgers)."""
    if state is None:
        return []
    return subtotals(list(map(attrgetter("group"), ledger.items)), state.mass, state.cg, state.own_sparse())


#: from this many items the group subtotals are added up after the table's first paint, not before
#: (they cost about a tenth of the file's load at 100,000 items); the table shows the items meanwhile
LATE_GROUPS = 20_000

#: the loading dialog's progress is repainted at most this often (s), and on each new phase: each
#: repaint is the screen thread's work, taken from the reader by the GIL (twice a second moves a bar)
PROGRESS_EVERY = 0.5


@contextmanager
def collector_paused():
    """Cyclic garbage collection off while a ledger is read and made ready for the table.

    A collection in between would walk every object just made (the youngest
    generation holds them all: 0.1-0.3 s at 100,000 items, right before the
    first paint), and again in the next generation. The reader and the items
    make no cycles. The load freezes what it read before the collector is
    back (`gc.freeze`); `thaw` hands it all back to the collector after the
    first paint, in its oldest generation, so nothing is kept from it for good.
    """
    collecting = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if collecting:
            gc.enable()


def thaw() -> None:
    """Frozen objects back to the collector's oldest generation (unreachable ones are freed by its next full pass)."""
    gc.unfreeze()


def read_ledger(path: str, progress=None) -> LoadedLedger:
    """Every ledger the editor opens for editing is read here, through the read cache when it is on.

    A cached read never feeds a write: the session reads the file afresh and
    compares before its first save (Session.save, io.ledger.file.confirmed_fresh).
    """
    from steelyard.io.ledger import cache

    return open_ledger(path, progress=progress, cache=cache.enabled())


class FileFlows:
    """Needs `self.session`, `self.refresh_views()` and `self.update_title()` from the App."""

    # ------------------------------------------------------------------ load
    def start_load(self, path: str | None, *, first: bool) -> None:
        what = "the demo ledger" if path is None else path
        self._loading = LoadingScreen(what)
        self.push_screen(self._loading)
        # start reading once the progress screen is painted: a parser holding the GIL
        # would otherwise keep even the first frame off the screen
        self.call_after_refresh(self._load_worker, path, first)

    @work(thread=True, exclusive=True, group="load", description="load ledger")
    def _load_worker(self, path: str | None, first: bool) -> None:
        shown = [0.0, None]

        def progress(phase: str, fraction: float | None = None) -> None:
            now = time.monotonic()
            if now - shown[0] >= PROGRESS_EVERY or phase != shown[1]:
                shown[0], shown[1] = now, phase
                self.post_message(LoadProgress(phase, fraction))

        demo = path is None
        try:
            with collector_paused():
                if not demo and not os.path.exists(path):
                    loaded, ledger = None, Ledger()  # a new ledger, written on the first save
                else:
                    loaded = read_ledger(str(demo_path()) if demo else path, progress)
                    ledger = loaded.ledger
                widest_texts(ledger.items)  # the table's column widths, measured here rather than at its first layout
                if len(ledger.items) >= LATE_GROUPS:
                    groups = None  # after the first paint (on_loaded), in a worker
                else:
                    progress("adding up groups", None)
                    try:
                        state = resolve(ledger, None)
                    except SteelyardError:
                        state = None
                    groups = groups_of(ledger, state)
                gc.freeze()  # before the collector is back: see collector_paused
        except SteelyardError as exc:
            self.post_message(LoadFailed(str(exc), first))
            return
        self.post_message(Loaded(loaded, demo, groups, path))

    def on_load_progress(self, message: LoadProgress) -> None:
        if isinstance(self.screen, LoadingScreen):
            self.screen.progress(message.phase, message.fraction)

    def _close_loading(self) -> None:
        if isinstance(self.screen, LoadingScreen):
            self.pop_screen()

    def on_load_failed(self, message: LoadFailed) -> None:
        self._close_loading()
        if message.first:
            self.exit(return_code=2, message=f"steelyard: {message.error}")
        else:
            self.notify(message.error, title="Cannot open", severity="error", markup=False, timeout=8)

    def on_loaded(self, message: Loaded) -> None:
        self.call_after_refresh(thaw)  # what the load froze, back to the collector once the table is painted
        self._close_loading()
        if self.session is not None:
            self.session.close_journal(discard=True)  # saved, or the user chose to discard (_keep_work)
            self.session.release_lock()
        ledger = message.loaded.ledger if message.loaded is not None else Ledger()
        self.session = Session(ledger, loaded=message.loaded, path=message.path, demo=message.demo)
        holder = self.session.claim_lock()
        self.refresh_views(groups=message.groups if message.groups is not None else [])
        if message.groups is None:  # a big ledger: its group rows follow the first paint
            self._first_groups = self.session.ledger
            self.call_after_refresh(self._late_groups)
        if holder is None:
            self.start_journal()
        if message.demo:
            self.notify("This is a copy of the demo ledger: Save as (W) writes it where you choose.",
                        timeout=6, markup=False)
        elif message.loaded is None:
            self.notify(f"New ledger: {message.path} is written on the first save.", markup=False)
            self.new_ledger_setup()
        if holder is not None:
            self._locked(holder)
        self.call_after_refresh(self._warm_units)

    def _late_groups(self) -> None:
        s = self.session
        if s is not None:
            self._subtotals_worker(s.ledger, s.loadout, s.totals().state)

    @work(thread=True, exclusive=True, group="units", description="unit registry")
    def _warm_units(self) -> None:
        """Build the unit registry now, off the screen's thread, once the ledger is painted.

        It takes a second or more and is otherwise built by the first unit
        typed into a form ("2 lb"), freezing the ✓ / ✗ line for that long.
        """
        registry()

    def _locked(self, holder) -> None:
        who = f"{clean(holder.user)}@{clean(holder.host)} (process {holder.pid}, since {when(holder.since)})"
        if self.session.lock_is_stale():
            def answer(choice: str | None) -> None:
                if choice == "take":
                    self.session.take_over_lock()
                    self.notify("Lock taken over: you can edit and save.", markup=False)
                    self.start_journal()  # the gone session's unsaved edits are offered here
                self.update_title()
                self.refresh_views()

            self.push_screen(ConfirmScreen(
                f"This file is locked by {who}, but that session looks gone (stale lock). Take the lock "
                "over and edit? Choose read-only if someone may still be working on it.",
                [("take", "Take over"), ("read", "Read-only")], title="File locked"), answer)
        else:
            self.notify(f"{who} is editing this file: opened read-only. Save as (W) keeps your work elsewhere.",
                        title="Read-only", severity="warning", timeout=10, markup=False)
        self.update_title()

    # ------------------------------------------------------------------ save
    def action_save(self) -> None:
        self._start_save(None)

    def action_save_as(self) -> None:
        self._start_save("ask")

    def _start_save(self, path: str | None) -> None:
        """Save in a worker; the keys typed from now on wait for its first question (the file name, the
        reason) and answer it (tui/key_hold.py), or act once the save is done."""
        if self.session is not None:
            self.hold_keys(self._save_worker(path))

    @work(exclusive=True, group="save", description="save")
    async def _save_worker(self, path: str | None) -> None:
        await self.save_steps(path)

    async def _ask(self, question: str, answers, title: str = "Please choose") -> str:
        return await self.push_screen_wait(ConfirmScreen(question, answers, title=title))

    def _path_prompt(self, title: str, value: str = "") -> TextPrompt:
        hint = "a ledger file path (TOML), relative to " + os.getcwd()
        return TextPrompt(title, value, hint=hint, placeholder="ledger.toml")

    async def _ask_path(self, title: str, value: str = "") -> str | None:
        return await self.push_screen_wait(self._path_prompt(title, value))

    async def save_steps(self, path: str | None) -> bool:
        """Save, asking whatever needs asking; True when the ledger is on disk."""
        s = self.session
        if path == "ask" or (path is None and s.path is None):
            path = await self._ask_path("Save as", s.path or "")
            if not path:
                return False
            path = os.path.expanduser(path)
            same = s.path is not None and os.path.realpath(path) == os.path.realpath(s.path)
            if not same and os.path.exists(path):
                if await self._ask(f"{path} exists. Replace it?", [("replace", "Replace"),
                                                                   ("cancel", "Cancel")]) != "replace":
                    return False
        if (path is not None or not s.read_only) and not await self._ask_reason():
            return False
        flags: dict[str, bool] = {}
        old_path = s.path
        while True:
            snap = s.snapshot()
            try:
                written = await asyncio.to_thread(s.save, path, snapshot=snap, **flags)
            except ChangedOnDisk:
                choice = await self._ask(
                    "The file changed on disk since it was opened (someone else saved it?). Overwrite their "
                    "version, or save yours under another name?",
                    [("overwrite", "Overwrite"), ("save_as", "Save as…"), ("cancel", "Cancel")], "Changed on disk")
                if choice == "overwrite":
                    flags["overwrite_changed"] = True
                    continue
                return await self.save_steps("ask") if choice == "save_as" else False
            except SteelyardError as exc:
                self.notify(str(exc), title="Not saved", severity="error", markup=False, timeout=8)
                return False
            except OSError as exc:
                self.notify(f"{path or s.path}: cannot write ({exc.strerror})", title="Not saved",
                            severity="error", markup=False, timeout=8)
                return False
            break
        moved = old_path is None or os.path.realpath(old_path) != os.path.realpath(written)
        s.journal_saved(snap[0], moved=moved)
        self._journal_warning()
        why = s.loaded.not_kept if s.loaded is not None else ""
        if why:  # rare: a layout the in-place writer does not edit; the meaning is saved all the same
            self.notify(f"saved {written} in canonical form; its own layout could not be kept ({why})",
                        severity="warning", markup=False, timeout=8)
        else:
            self.notify(f"saved {written}", markup=False, timeout=5)
        self.update_title()
        self.refresh_views()
        return True

    async def _ask_reason(self) -> bool:
        """Ask why (and under which change request) for the changes this save writes; False: cancelled.

        Asked only when some unsaved change has no reason yet; Enter with nothing typed saves
        without one."""
        s = self.session
        waiting = s.unexplained()
        if not waiting:
            return True
        answer = await self.push_screen_wait(ReasonPrompt(len(waiting)))
        if answer is None:
            return False
        s.annotate(*answer)
        return True

    # ------------------------------------------------------------ open, quit
    # The unsaved-work question is put up by the key itself, before the next key is read: it is the
    # question the key asks, so keys typed after Ctrl+O or Ctrl+Q answer it. Put up later by a worker it
    # would be guarded, taking no key typed ahead (tui/key_hold.py).
    async def action_open(self) -> None:
        if self.session is not None and self.session.dirty:
            await self.push_screen(self._keep_work_question("opening another file"),
                                   lambda choice: self.hold_keys(self._open_worker(choice)))
        else:
            await self.push_screen(self._path_prompt("Open ledger"), self._open_path)

    @work(exclusive=True, group="open")
    async def _open_worker(self, choice: str) -> None:
        if await self._keep_work("opening another file", choice):
            self._open_path(await self._ask_path("Open ledger"))

    def _open_path(self, path: str | None) -> None:
        if path:
            self.start_load(os.path.expanduser(path), first=False)

    def _keep_work_question(self, doing: str) -> ConfirmScreen:
        return ConfirmScreen(f"There are unsaved changes. Save them before {doing}?",
                             [("save", "Save"), ("discard", "Discard"), ("cancel", "Cancel")], title="Unsaved work")

    async def _keep_work(self, doing: str, choice: str | None = None) -> bool:
        """Ask about unsaved work (`choice`: already answered); True when it is safe to go on."""
        if choice is None:
            choice = await self.push_screen_wait(self._keep_work_question(doing))
        if choice == "save":
            return await self.save_steps(None)
        return choice == "discard"

    async def action_quit(self) -> None:
        if self.session is None or not self.session.dirty:
            await self._quit_now()
        else:
            await self.push_screen(self._keep_work_question("quitting"),
                                   lambda choice: self.hold_keys(self._quit_worker(choice)))

    @work(exclusive=True, group="quit")
    async def _quit_worker(self, choice: str) -> None:
        if await self._keep_work("quitting", choice):
            await self._quit_now()

    async def _quit_now(self) -> None:
        """Quit on purpose: nothing unsaved is wanted any more (saved, discarded, or none), so the journal goes."""
        if self.session is not None:
            self.session.close_journal(discard=True)
            self.session.release_lock()
        self.exit(0)
