"""One editing session on one ledger: history, loadout, units, file, lock and journal.

No widgets here: the App asks the session for numbers and tells it what the
user did, so every rule (what is unsaved, what may be written, who holds the
file) can be tested without a terminal. Numbers come from core; files,
locks and the journal of unsaved edits from io.

Every accepted edit, undo and redo is journaled (`io.journal`, fsync'd) in
`apply` / `undo` / `redo`, before the screen shows it, so a killed process
or a dropped SSH session loses nothing; see docs/durability.md.
"""

from __future__ import annotations

import hashlib
import os
from collections.abc import Callable
from dataclasses import replace

from steelyard.core.history.changes import Change, Effect, History, ledger_with_log, log_from_ledger, utc_stamp
from steelyard.core.display import DisplayUnits, UnitChoice
from steelyard.core.errors import SteelyardError
from steelyard.core.document.model import Ledger
from steelyard.core.physics.rollup import MassProperties
import steelyard.io.durability.journal as J
from steelyard.io.ledger.file import LoadedLedger, confirmed_fresh, save_ledger
from steelyard.io.durability.lock import Lock, LockInfo, Locked, LockUnavailable, acquire, is_stale, take_over, who_am_i
from steelyard.tui.state.totals import Totals, compute_totals, effect_of

__all__ = ["EMPTY_SHA256", "UNIT_SYSTEMS", "Session", "Totals", "compute_totals", "effect_of"]

#: display unit systems the units key cycles through (None: the file's own)
UNIT_SYSTEMS: tuple[str | None, ...] = (None, "si", "us")
#: the base hash of a journal for a file that does not exist yet (sha256 of no bytes)
EMPTY_SHA256 = hashlib.sha256(b"").hexdigest()


def _saved_units() -> UnitChoice:
    """The display units saved in the user's settings; the file's own if none (or unreadable)."""
    from steelyard.io.user_settings import load_choice

    try:
        return load_choice()
    except SteelyardError:
        return UnitChoice()


class Session:
    """State of the editor between keystrokes."""

    def __init__(self, ledger: Ledger, *, loaded: LoadedLedger | None = None, path: str | None = None,
                 demo: bool = False, author: str | None = None):
        self.history = History(ledger, log=log_from_ledger(ledger))
        self.loaded = loaded
        self.path = path if path is not None else (loaded.path if loaded and not demo else None)
        self.demo = demo
        self.author = author or who_am_i()
        self.saved: Ledger = self.history.ledger  # a demo copy is unsaved only once it is edited
        self.saved_log: tuple[Change, ...] = self.history.log  # the log as the file holds it
        self.loadout: str | None = None
        self.system: UnitChoice = _saved_units()  # the person's own display units (not the ledger's)
        self.lock: Lock | None = None
        self.holder: LockInfo | None = None  # who holds the file when we are read-only
        self.no_lock: str | None = None  # why no lock could be made (a read-only folder)
        self._memo: list[tuple[Ledger, str | None, Totals]] = []  # the last few roll-ups, newest last
        # edits shown but not yet entered in the change log (see `apply(defer=True)`)
        self._pending: list[tuple] = []
        self._head: Ledger | None = None
        self.journal: J.Journal | None = None
        self.journal_error: str | None = None  # why edits are not journaled right now
        self.journal_hold: str | None = None  # unsaved edits of an earlier session wait: read-only
        self.extras = None  # chart_extras.ChartExtras, computed off-thread by the App
        #: placed files saved since they were read (file as placed -> (resolved ledger, sha256)):
        #: an undo or redo to a ledger made before that save places them again (`placed_fresh`)
        self.fresh_files: dict = {}
        self._saved_pair: tuple | None = None  # (saved ledger before a placed file's save, after)

    # ---------------------------------------------------------------- state
    @property
    def ledger(self) -> Ledger:
        return self._head if self._pending else self.history.ledger

    @property
    def log(self):
        """The change log, with every shown edit entered."""
        self.flush()
        return self.history.log

    @property
    def dirty(self) -> bool:
        """Unsaved work: the ledger is not the object last read or written."""
        return self.ledger is not self.saved

    @property
    def read_only(self) -> bool:
        return self.holder is not None or self.no_lock is not None or self.journal_hold is not None

    def read_only_reason(self) -> str:
        if self.holder is not None:
            h = self.holder
            return f"{h.user}@{h.host} is editing this file"
        return self.no_lock or self.journal_hold or ""

    @property
    def units(self) -> DisplayUnits:
        return DisplayUnits.choose(self.ledger.units, self.system)

    @property
    def name(self) -> str:
        if self.path:
            return os.path.basename(self.path)
        return "demo ledger" if self.demo else "new ledger"

    def title(self) -> str:
        """Window title: file name, then what is special about it."""
        marks = []
        if self.dirty:
            marks.append("unsaved changes")
        if self.demo and not self.path:
            marks.append("copy of the demo")
        if self.holder is not None:
            marks.append(f"read-only, locked by {self.holder.user}@{self.holder.host}")
        elif self.no_lock is not None or self.journal_hold is not None:
            marks.append("read-only")
        return f"{'* ' if self.dirty else ''}{self.name}" + (f" ({'; '.join(marks)})" if marks else "")

    def totals(self) -> Totals:
        return self.totals_for(self.ledger)

    def totals_for(self, ledger: Ledger, loadout: str | None | object = ...) -> Totals:
        """Roll-up of `ledger` under the active loadout (or `loadout`), remembered for a few ledgers.

        The form's preview rolls up the edited ledger; applying the edit then
        finds it here, and the change log's effect reuses both sides.
        """
        lo = self.loadout if loadout is ... else loadout
        for led, name, t in reversed(self._memo):
            if led is ledger and name == lo:
                return t
        t = compute_totals(ledger, lo)
        memo = self._memo + [(ledger, lo, t)]
        while len(memo) > 4:  # drop the oldest, but keep what the screen shows now
            k = next((k for k, (led, _n, _t) in enumerate(memo) if led is not self.ledger), 0)
            del memo[k]
        self._memo = memo
        return t

    def chart_extras(self):
        """Sequences and uncertainty for the active loadout (maybe of an older ledger), or None."""
        e = self.extras
        return e if e is not None and e.loadout == self.loadout else None

    def other_points(self) -> list[tuple[str, MassProperties]]:
        """Roll-ups of the loadouts that are not active (for the chart)."""
        out = []
        for lo in self.ledger.loadouts:
            if lo.name == self.loadout:
                continue
            t = compute_totals(self.ledger, lo.name)
            if t.mp is not None and t.mp.mass > 0:
                out.append((lo.name, t.mp))
        return out

    def set_loadout(self, name: str | None) -> None:
        if name is not None:
            self.ledger.loadout(name)  # KeyError for a name that is not there
        self.loadout = name

    def cycle_units(self) -> UnitChoice:
        """The next system (file, SI, US); units picked per quantity stay picked."""
        k = UNIT_SYSTEMS.index(self.system.system)
        self.system = replace(self.system, system=UNIT_SYSTEMS[(k + 1) % len(UNIT_SYSTEMS)])
        return self.system

    # -------------------------------------------------------------- editing
    def check_writable(self) -> None:
        if self.read_only:
            raise SteelyardError(f"read-only: {self.read_only_reason()}; use Save as to keep your work "
                                 "elsewhere", file=self.path)

    def apply(self, new_ledger: Ledger, *, action: str, item: str | None, summary: str,
              defer: bool = False, fields: tuple | None = None) -> Change | None:
        """Make `new_ledger` current and enter the change in the log.

        With `defer` the log entry (whose effect costs two more roll-ups) is
        made by the next `flush()`, which the App runs right after the new
        totals are on screen; everything that reads the log flushes first.
        `fields` = (before, after): the change log's changed fields, for a change
        that is not about one item (a placement).
        """
        self.check_writable()
        self._journal(self.ledger, new_ledger, self._change(action, item, summary))
        if defer:
            self._pending.append((new_ledger, action, item, summary, self.loadout, self.ledger, fields))
            self._head = new_ledger
            return None
        self.flush()
        more = {} if fields is None else {"before": fields[0], "after": fields[1]}
        return self.history.apply(new_ledger, action=action, item=item, summary=summary,
                                  loadout=self.loadout, author=self.author, **more)

    def flush(self) -> list[Change]:
        """Enter the deferred edits in the change log, oldest first."""
        out = []
        while self._pending:
            new, action, item, summary, loadout, old, fields = self._pending[0]
            more = {} if fields is None else {"before": fields[0], "after": fields[1]}
            out.append(self.history.apply(new, action=action, item=item, summary=summary, loadout=loadout,
                                          author=self.author, effect=self._known_effect(old, new, loadout),
                                          **more))
            self._pending.pop(0)
        self._head = None
        return out

    def undo(self) -> Change | None:
        return self._step(self.history.undo, "undo")

    def redo(self) -> Change | None:
        return self._step(self.history.redo, "redo")

    def _step(self, step: Callable[[], Change | None], action: str) -> Change | None:
        """Undo or redo one change (`step`), journaled like any edit under `action`."""
        self.check_writable()
        self.flush()
        before = self.history.ledger
        change = step()
        if change is not None:
            self.placed_fresh()
            self._journal(before, self.history.ledger,
                          self._change(action, change.item, f"{action}: {change.summary}"))
        return change

    def placed_fresh(self) -> None:
        """The current ledger with every placed file saved since it was made placed again (undo of an
        edit made before a placed file was saved shows that file as it is now)."""
        if self.fresh_files:
            from steelyard.tui.state.assembly import stale_files

            old = self.history.ledger
            if self._saved_pair is not None and old is self._saved_pair[0]:
                fresh = self._saved_pair[1]  # back at the ledger as saved: so it shows again
            else:
                fresh = stale_files(old, self.fresh_files)
            if fresh is not old:
                self.history.reseat(fresh)

    def placed_file_saved(self, file: str, child: Ledger, sha256: str) -> None:
        """A file this ledger places was saved (opened in place from here): its rows are placed again
        from `child` (a splice, no re-read). Not an edit of this file: nothing is journaled or logged, and
        a ledger without unsaved work stays so."""
        from steelyard.tui.state.assembly import replaced_file

        self.flush()
        self.fresh_files[file] = (child, sha256)
        clean = self.saved is self.history.ledger
        new = replaced_file(self.history.ledger, file, child, sha256)
        self.history.reseat(new)
        old_saved = self.saved
        if clean:
            self.saved = new
        elif any(q.file == file for q in self.saved.placed):
            self.saved = replaced_file(self.saved, file, child, sha256)
        self._saved_pair = (old_saved, self.saved)

    def _known_effect(self, old: Ledger, new: Ledger, loadout: str | None) -> Effect | None:
        """The effect from remembered roll-ups of both sides; None (History computes it) otherwise."""
        known = {id(led): t for led, name, t in self._memo if name == loadout and (led is old or led is new)}
        if id(old) in known and id(new) in known:
            return effect_of(known[id(old)], known[id(new)])
        return None

    def unexplained(self) -> list[Change]:
        """Changes of this session not saved yet and without a reason or request: what a save asks about."""
        kept = {id(c) for c in self.saved_log}
        return [c for c in self.log if id(c) not in kept and not c.reason and not c.request]

    def annotate(self, reason: str | None, request: str | None) -> int:
        """Give the unsaved changes without a reason this reason and change request (both optional)."""
        self.flush()
        return self.history.annotate(reason, request, saved=self.saved_log)

    # -------------------------------------------------------------- journal
    def _change(self, action: str, item: str | None, summary: str) -> dict:
        """What the journal keeps beside an edit, so a restore rebuilds the change log."""
        return {"action": action, "item": item, "summary": summary, "author": self.author,
                "when": utc_stamp(), "loadout": self.loadout}

    def _journal(self, before: Ledger, after: Ledger, change: dict) -> None:
        if self.journal is None:
            return
        try:
            self.journal.record(before, after, change=change)
        except SteelyardError as exc:  # a full disk: warn, keep editing
            self.journal_error = f"edits are not journaled: {exc}"

    @property
    def base_sha256(self) -> str:
        return self.loaded.sha256 if self.loaded is not None else EMPTY_SHA256

    def pending_journal(self) -> J.JournalState | None:
        """Unsaved edits of an earlier session on this file (None: none, or no file)."""
        if self.path is None:
            return None
        return J.pending(self.path, current_sha256=self.base_sha256)

    def open_journal(self, *, resume: bool = False) -> None:
        """Start journaling; on failure edits go on unjournaled and `journal_error` says why."""
        self.close_journal()
        if self.path is None or self.read_only:
            return
        try:
            self.journal = J.Journal.open(self.path, self.base_sha256, resume=resume, user=self.author)
            self.journal_error = None
        except SteelyardError as exc:
            self.journal_error = f"edits are not journaled: {exc}"

    def close_journal(self, *, discard: bool = False) -> None:
        if self.journal is not None:
            try:
                self.journal.close(discard=discard)
            finally:
                self.journal = None

    def restored(self, history: History, state: J.JournalState) -> None:
        """Take a history rebuilt from the journal (`journal_restore`) and carry on journaling."""
        self._pending.clear()
        self._head = None
        self.history = history
        if state.matches:
            self.open_journal(resume=True)
            return
        J.discard(self.path)
        self.open_journal()
        self._journal(self.saved, self.ledger, self._change(
            "restore", None, f"restored {len(state.records)} unsaved edits onto a changed file"))

    def journal_saved(self, saved: Ledger, *, moved: bool) -> None:
        """After a save (on the UI thread): the journal starts over from the file just written.

        Edits made while the save ran (after its snapshot) are journaled again
        against the saved ledger, so none is dropped with the old records.
        """
        if self.path is None or self.read_only:
            return
        try:
            if moved or self.journal is None:
                self.close_journal(discard=True)  # its edits are in the file saved elsewhere
                self.open_journal()
            else:
                self.journal.saved(self.base_sha256)
        except SteelyardError as exc:
            self.journal_error = f"edits are not journaled: {exc}"
            return
        if self.ledger is not saved:
            self._journal(saved, self.ledger, self._change("edit", None, "edits made while saving"))

    # ---------------------------------------------------------------- files
    def snapshot(self) -> tuple[Ledger, tuple]:
        """What a save writes: the ledger and its full change log (call on the UI thread)."""
        self.flush()
        return self.ledger, self.history.log

    def save(self, path: str | None = None, *, overwrite_changed: bool = False,
             snapshot: tuple[Ledger, tuple] | None = None) -> str:
        """Write the ledger and its change log atomically; returns the path written.

        Saving over the file that was opened keeps its layout and comments
        (io.ledger.layout). `snapshot` (from `snapshot()`) lets the write run
        in a worker thread while edits go on. Raises ChangedOnDisk (from io)
        for the caller to ask about, and SteelyardError when there is nowhere
        to save yet.
        """
        target = path or self.path
        if target is None:
            raise SteelyardError("no file yet: choose where to save (Save as)")
        same = self.path is not None and os.path.realpath(target) == os.path.realpath(self.path)
        new_lock = None
        if same:
            self.check_writable()
        else:
            try:
                new_lock = acquire(target)
            except Locked as exc:
                i = exc.info
                raise SteelyardError(f"{i.user}@{i.host} is editing that file; choose another name",
                                     file=target) from None
            except LockUnavailable as exc:
                raise SteelyardError(f"cannot save there: {exc.message}", file=target) from None
        ledger, log = snapshot if snapshot is not None else self.snapshot()
        if self.loaded is not None and self.loaded.from_cache:  # a write never starts from the read cache
            try:
                self.loaded = confirmed_fresh(self.loaded)
            except BaseException:
                if new_lock is not None:
                    new_lock.release()
                raise
        try:
            record = save_ledger(target, ledger_with_log(ledger, log),
                                 loaded=self.loaded, overwrite_changed=overwrite_changed)
        except BaseException:
            if new_lock is not None:
                new_lock.release()
            raise
        self.loaded = record
        self.saved = ledger
        self.saved_log = tuple(log)
        if new_lock is not None:
            self.release_lock()
            self.lock, self.holder, self.no_lock, self.path, self.demo = new_lock, None, None, target, False
        return target

    # ----------------------------------------------------------------- lock
    def claim_lock(self) -> LockInfo | None:
        """Take the file's lock; on refusal go read-only and return who holds it."""
        if self.path is None or self.lock is not None:
            return None
        try:
            self.lock = acquire(self.path)
        except Locked as exc:
            self.holder = exc.info
            return exc.info
        except LockUnavailable as exc:
            self.no_lock = exc.message
            return None
        self.holder = self.no_lock = None
        return None

    def lock_is_stale(self) -> bool:
        return self.holder is not None and is_stale(self.holder)

    def take_over_lock(self, *, force: bool = False) -> None:
        """Replace the holder's lock with ours (stale, or `force` when the user chose so)."""
        if self.holder is None or self.path is None:
            return
        self.lock = take_over(self.path, self.holder, force=force)
        self.holder = None

    def release_lock(self) -> None:
        if self.lock is not None:
            try:
                self.lock.release()
            finally:
                self.lock = None
