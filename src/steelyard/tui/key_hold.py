"""Keys typed while a flow goes from one question to the next wait for the next question.

A flow that asks more than one question (Save as: the file name, then, if
the file exists, whether to replace it, then why) runs in a worker. After
an answer the worker takes a moment to put its next question up, and keys
typed in that moment (a fast typist, a paste over SSH) went to the ledger
screen as commands: "w" of a reason opened the weighing form.

While the App holds keys for a worker, every key that arrives is kept, in
order. The keys are handed on, one message at a time and as if typed then,
once that worker has a dialog on screen (mounted, its field focused) or has
ended, and after `HOLD_SECONDS` at the latest: a hold never freezes the
keyboard. A key handed on that answers a question starting another wait
(the next Enter of a chain) stops the hand-over, and the rest wait again.

Only a question one types ahead into on purpose takes the kept keys: a
file name, a reason, a choice of loadout (a screen class with
`TAKES_KEYS_TYPED_AHEAD`). A question that may come unexpected ("Replace
it?", "changed on disk", unsaved work) never does: an Enter typed for the
reason must not confirm an overwrite. When one of those comes up, the kept
keys are dropped, and so is every key made before its first paint (a key
event carries the time it was read: one still on its way when the question
was put up was not typed in answer to it), with a bell and a note.

A hold starts when a dialog a worker awaits (`push_screen_wait`) is
dismissed, and where a dialog's answer or a key starts a flow's worker
(`hold_keys`). Mouse events are never held.
"""

from __future__ import annotations

from textual import _time, events
from textual.worker import NoActiveWorker, Worker, WorkerState, get_current_worker

#: the longest keys wait for a worker's next question
HOLD_SECONDS = 3.0

_ENDED = (WorkerState.SUCCESS, WorkerState.ERROR, WorkerState.CANCELLED)
_ANY = object()  # a screen that takes every key (no `_shown_at`)


class KeyHold:
    """Mixin for the App (before `App` in its bases)."""

    _held: list[events.Key] | None = None  # None: keys go straight on
    _holder: Worker | None = None  # the worker whose next question the keys wait for
    _handing_on = False
    _hold_timer = None
    _drop_count = 0  # keys dropped and not yet told

    # ------------------------------------------------------------ holding
    def hold_keys(self, worker: Worker | None) -> None:
        """Keep the keys that arrive from now on until `worker` puts a dialog up or ends."""
        if worker is None or worker.is_finished:
            return
        if self._held is None:
            self._held = []
        self._holder, self._handing_on = worker, False
        if self._hold_timer is not None:
            self._hold_timer.stop()
        self._hold_timer = self.set_timer(HOLD_SECONDS, self.release_keys)

    def release_keys(self) -> None:
        """Hand the kept keys on, behind any key already on its way (those are kept too, in order)."""
        if self._held is None or self._handing_on:
            return
        self._handing_on, self._holder = True, None
        if self._hold_timer is not None:
            self._hold_timer.stop()
            self._hold_timer = None
        self.call_later(self._hand_on_one)

    async def _hand_on_one(self) -> None:
        """The first kept key, as if typed now; the next in a message of its own, so that an answer's
        callback (run right after this message) can start another hold first."""
        if not self._handing_on:  # another hold began: the rest wait for it
            return
        if not self._held:
            self._held, self._handing_on = None, False
            return
        key = self._held.pop(0)
        await super().on_event(key)
        if self._handing_on:
            self.call_later(self._hand_on_one)

    @property
    def keys_held(self) -> int:
        """How many keys wait (0 when none is held)."""
        return len(self._held or ())

    # ---------------------------------------------------- the App's events
    async def on_event(self, event: events.Event) -> None:
        if isinstance(event, events.Key) and not event.is_forwarded:
            if self._held is not None:
                self._held.append(event)
                return
            shown = getattr(self.screen, "_shown_at", _ANY)
            if shown is not _ANY and (shown is None or event.time < shown):
                self._dropped(1)  # made before the question was on screen: not an answer to it
                return
        await super().on_event(event)

    def push_screen(self, screen, callback=None, wait_for_dismiss: bool = False, **kwargs):
        if wait_for_dismiss and not isinstance(screen, str):
            try:
                screen._answer_awaited_by = get_current_worker()  # its answer: the worker goes on (pop_screen)
            except NoActiveWorker:
                pass
        result = super().push_screen(screen, callback, wait_for_dismiss, **kwargs)
        if self._held is not None and not self._handing_on and not isinstance(screen, str):
            if getattr(screen, "TAKES_KEYS_TYPED_AHEAD", False):
                self._release_when_mounted(screen)
            else:
                self._guard(screen)
        return result

    def _guard(self, screen) -> None:
        """A question the keys were not typed for: none of them, nor any key made before its first
        paint, answers it."""
        n = len(self._held or ())
        self._held, self._holder = None, None
        if self._hold_timer is not None:
            self._hold_timer.stop()
            self._hold_timer = None
        screen._shown_at = None  # until painted: every key is older than the question

        def shown() -> None:
            if screen._shown_at is None:
                screen._shown_at = _time.get_time()

        screen.call_after_refresh(shown)
        self.set_timer(0.5, shown)  # at the latest: the question always takes the keys typed once it is up
        if n:
            self._dropped(n)

    def _dropped(self, n: int) -> None:
        """Count keys not used; one bell and one note for those dropped close together."""
        if not self._drop_count:
            self.bell()
            self.set_timer(0.3, self._note_dropped)
        self._drop_count += n

    def _note_dropped(self) -> None:
        n, self._drop_count = self._drop_count, 0
        self.notify(f"{n} key{'s' if n != 1 else ''} typed before this question came up "
                    f"{'were' if n != 1 else 'was'} not used: answer it now that it is shown.",
                    severity="warning", markup=False, timeout=6)

    def pop_screen(self):
        top = self.screen_stack[-1] if self.screen_stack else None
        worker = getattr(top, "_answer_awaited_by", None)
        result = super().pop_screen()
        if worker is not None:
            self.hold_keys(worker)  # until it asks its next question or ends
        return result

    def _release_when_mounted(self, screen) -> None:
        """Release once `screen` is mounted (its first field focused), or gone, or another hold began."""
        if self._held is None or self._handing_on:
            return
        if screen.is_mounted or screen not in self.screen_stack:
            self.release_keys()
        else:
            self.set_timer(0.01, lambda: self._release_when_mounted(screen))

    def on_worker_state_changed(self, event: Worker.StateChanged) -> None:
        if event.worker is self._holder and event.state in _ENDED:
            self.release_keys()  # the flow ended without another question: the keys act where they land
