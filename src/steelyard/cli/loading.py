"""Shared by headless commands: open a ledger with progress, pick a loadout."""

from __future__ import annotations

from steelyard.core.errors import SteelyardError
from steelyard.io.ledger.file import LoadedLedger, open_ledger
from steelyard.cli.progress import LoadProgress


def load_for_cli(path: str) -> LoadedLedger:
    with LoadProgress(f"loading {path}") as progress:
        return open_ledger(path, progress=progress)


def check_loadout(loaded: LoadedLedger, name: str | None) -> None:
    if name is None:
        return
    names = [lo.name for lo in loaded.ledger.loadouts]
    if name not in names:
        known = ", ".join(repr(n) for n in names) or "none"
        raise SteelyardError(f"no loadout named {name!r} (loadouts: {known})", file=loaded.path,
                             field="--loadout")
