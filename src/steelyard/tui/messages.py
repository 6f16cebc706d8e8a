"""Messages the App's worker threads post to it (loading, subtotals, journal restore, chart extras)."""

from __future__ import annotations

from textual.message import Message


class LoadProgress(Message):
    def __init__(self, phase: str, fraction: float | None) -> None:
        super().__init__()
        self.phase, self.fraction = phase, fraction


class Loaded(Message):
    def __init__(self, loaded, demo: bool, groups, path: str | None) -> None:
        super().__init__()
        self.loaded, self.demo, self.groups, self.path = loaded, demo, groups, path


class LoadFailed(Message):
    def __init__(self, error: str, first: bool) -> None:
        super().__init__()
        self.error, self.first = error, first


class SubtotalsReady(Message):
    def __init__(self, ledger, loadout, groups) -> None:
        super().__init__()
        self.ledger, self.loadout, self.groups = ledger, loadout, groups


class Restored(Message):
    """The journal's edits rebuilt into a history (None and `error` when they could not apply)."""

    def __init__(self, session, state, history, error: str | None) -> None:
        super().__init__()
        self.session, self.state, self.history, self.error = session, state, history, error


class ExtrasReady(Message):
    def __init__(self, extras) -> None:
        super().__init__()
        self.extras = extras


class Compared(Message):
    """A diff of two sides (None and `error` when it could not be made)."""

    def __init__(self, diff, a, b, error: str | None) -> None:
        super().__init__()
        self.diff, self.a, self.b, self.error = diff, a, b, error
