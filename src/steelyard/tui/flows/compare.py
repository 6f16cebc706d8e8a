"""The App's compare steps: choose what to compare with, load it, diff it, show it.

A is the reference the user picks (another loadout of this ledger, the
ledger as last saved, or another file or snapshot); B is this ledger now
under the active loadout, so every Δ reads "what changed since A". Files
are read and compared in worker threads (`core.diff.compare` is one numpy
pass, but reading a big file is not); a snapshot is checked on the way
(`io.snapshot.verify_loaded`) and a failed check is shown on the screen,
not hidden, while the comparison still runs.
"""

from __future__ import annotations

import asyncio
import os

from textual import work

from steelyard.core.history.diff import compare
from steelyard.core.errors import SteelyardError
from steelyard.io.ledger.file import open_ledger
from steelyard.io.ledger.snapshot import snapshot_info, verify_loaded
from steelyard.tui.screens.choice_screen import ChoiceScreen
from steelyard.tui.screens.compare_screen import CompareScreen
from steelyard.tui.state.compare_text import Side
from steelyard.tui.messages import Compared
from steelyard.tui.text import clean


def _loadout_words(name: str | None) -> str:
    return "no loadout (variable items empty)" if name is None else f"loadout {name}"


def load_other(path: str) -> tuple[object, str, bool]:
    """(ledger, note, is_snapshot) of another file; a snapshot's failed check goes in the note."""
    loaded = open_ledger(path)
    try:
        info = snapshot_info(loaded.ledger, file=path)
    except SteelyardError as exc:
        return loaded.ledger, f"not a valid snapshot ({exc}); compared as a ledger", False
    if info is None:
        return loaded.ledger, "", False
    note = (f"snapshot taken {info.taken} by {info.author or 'unknown'} from {info.source or '?'}, "
            f"{_loadout_words(info.loadout)}")
    try:
        verify_loaded(loaded, file=path)
        note += "; its hash and totals check out"
    except SteelyardError as exc:  # SnapshotMismatch, or a damaged [snapshot] table
        note += f"; CHECK FAILED: {exc.message} (compared anyway)"
    return loaded.ledger, note, True


class CompareFlows:
    """Needs `self.session`, `self.main` and `self._may_edit()` from the App."""

    def action_compare(self) -> None:
        if not self._may_edit(write=False):
            return
        s = self.session
        choices = [("none", "this ledger, " + _loadout_words(None))]
        choices += [(f"lo{k}", f"this ledger, loadout {lo.name}" + (" (the active one)" if lo.name == s.loadout else ""))
                    for k, lo in enumerate(s.ledger.loadouts)]
        if s.dirty:
            choices.append(("saved", "this ledger as last opened or saved (shows your unsaved changes)"))
        choices.append(("file", "another ledger file or snapshot…"))
        others = [k for k, _ in choices if k not in ("none", "saved", "file")]
        active = [f"lo{k}" for k, lo in enumerate(s.ledger.loadouts) if lo.name == s.loadout]
        selected = next((k for k in others if k not in active), "file")
        self.push_screen(ChoiceScreen(
            "Compare with…", choices, selected=selected,
            hint=f"A is what you pick; B is this ledger now ({_loadout_words(s.loadout)}); every Δ is B − A."),
            self._compare_choice)

    def _this(self) -> Side:
        s = self.session
        return Side(f"{s.name} now, {_loadout_words(s.loadout)}", s.ledger, s.loadout, working=True)

    def _compare_choice(self, key: str | None) -> None:
        s = self.session
        if key is None or s is None:
            return
        if key == "file":
            self.hold_keys(self._compare_file_worker())
            return
        if key == "saved":
            lo = s.loadout if s.loadout in {x.name for x in s.saved.loadouts} else None
            a = Side(f"{s.name} as last opened or saved, {_loadout_words(lo)}", s.saved, lo)
        else:
            name = None if key == "none" else s.ledger.loadouts[int(key[2:])].name
            a = Side(f"{s.name} now, {_loadout_words(name)}", s.ledger, name, working=True)
        self.start_compare(a, self._this())

    @work(exclusive=True, group="compare-file")
    async def _compare_file_worker(self) -> None:
        s = self.session
        path = await self._ask_path("Compare with a ledger file or snapshot",
                                    os.path.dirname(s.path) + os.sep if s.path else "")
        if not path:
            return
        path = os.path.expanduser(path)
        self.notify(f"reading {path}…", markup=False, timeout=2)
        try:
            ledger, note, snapshot = await asyncio.to_thread(load_other, path)
        except SteelyardError as exc:
            self.notify(str(exc), title="Cannot compare", severity="error", markup=False, timeout=8)
            return
        loadout = None
        if not snapshot and ledger.loadouts:
            names = [lo.name for lo in ledger.loadouts]
            choices = [("none", _loadout_words(None))] + [(f"lo{k}", f"loadout {n}") for k, n in enumerate(names)]
            same = f"lo{names.index(s.loadout)}" if s.loadout in names else "none"
            key = await self.push_screen_wait(ChoiceScreen(f"Which loadout of {clean(os.path.basename(path))}?",
                                                           choices, selected=same))
            if key is None:
                return
            loadout = None if key == "none" else names[int(key[2:])]
        label = f"{path}" + (" (snapshot)" if snapshot else f", {_loadout_words(loadout)}")
        self.start_compare(Side(label, ledger, loadout, note), self._this())

    def start_compare(self, a: Side, b: Side) -> None:
        self._compare_worker(a, b)

    @work(thread=True, exclusive=True, group="compare", description="compare")
    def _compare_worker(self, a: Side, b: Side) -> None:
        try:
            diff = compare(a.ledger, a.loadout, b.ledger, b.loadout)
        except SteelyardError as exc:
            self.post_message(Compared(None, a, b, str(exc)))
            return
        self.post_message(Compared(diff, a, b, None))

    def on_compared(self, message: Compared) -> None:
        if message.diff is None:
            self.notify(message.error, title="Cannot compare", severity="error", markup=False, timeout=8)
            return
        if isinstance(self.screen, CompareScreen):
            self.pop_screen()  # a swap: the new comparison replaces the old one
        self.push_screen(CompareScreen(message.diff, message.a, message.b, self.session.units))

    def on_compare_screen_swap(self, message: CompareScreen.Swap) -> None:
        screen = self.screen
        if isinstance(screen, CompareScreen):
            self.start_compare(screen.b, screen.a)

    def on_compare_screen_jump_to(self, message: CompareScreen.JumpTo) -> None:
        s = self.session
        if s is None or message.item_id not in s.ledger.index:
            self.notify(f"{clean(message.item_id)} is not in the ledger being edited (it is only in the other side).",
                        markup=False, timeout=4)
            return
        while isinstance(self.screen, CompareScreen):
            self.pop_screen()
        self.main.reveal_item(message.item_id)
