"""Shared by headless commands: open a ledger with progress, pick a loadout, name the file in errors.

Most commands start the same way: load FILE, check that --loadout names one
of its loadouts, compute something from the ledger, and have any error from
that computation name FILE. `prepare` does exactly that, once for all.
"""

from __future__ import annotations

import gc
import sys

from contextlib import contextmanager
from typing import Callable, Iterator, TypeVar

from steelyard.core.document.model import Ledger
from steelyard.core.errors import SteelyardError
from steelyard.io.ledger.file import LoadedLedger, open_ledger
from steelyard.cli.progress import LoadProgress

T = TypeVar("T")


def load_for_cli(path: str, *, cache: bool = True, memory=None) -> LoadedLedger:
    """Open `path` for a command. `cache=False` for a command that writes a ledger made from what it
    reads: a write never comes from the read cache (io.ledger.cache), which --no-cache and
    STEELYARD_NO_CACHE=1 turn off for every command. `memory`: see io.ledger.read_reuse."""
    with gc_paused(), LoadProgress(f"loading {path}") as progress:
        loaded = open_ledger(path, progress=progress, cache=cache, memory=memory)
        # A command keeps the ledger to its end: moving what was just read out of the cyclic collector's
        # reach before the collector runs spares it scanning every item (a tree of assemblies holds each
        # item twice: in its own file's ledger and placed); memory is still freed by reference counting.
        gc.freeze()
    from steelyard.io.ledger.read import reading_notes

    for note in reading_notes(loaded.ledger):  # stderr: stdout stays data for scripts
        print(f"steelyard: note: {loaded.path}: {note}", file=sys.stderr)
    return loaded


def check_loadout(loaded: LoadedLedger, name: str | None) -> None:
    if name is None:
        return
    names = [lo.name for lo in loaded.ledger.loadouts]
    if name not in names:
        known = ", ".join(repr(n) for n in names) or "none"
        raise SteelyardError(f"no loadout named {name!r} (loadouts: {known})", file=loaded.path,
                             field="--loadout")


@contextmanager
def gc_paused() -> Iterator[None]:
    """Cyclic garbage collection off while a command builds its output from a loaded ledger.

    Building 100,000 rows allocates millions of containers; each collection would walk
    the whole live ledger again (a large ledger's export spent more time there than in
    its own work). Nothing built here makes cycles that must be freed before the end."""
    import gc

    was = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was:
            gc.enable()


@contextmanager
def located(loaded: LoadedLedger) -> Iterator[None]:
    """A SteelyardError raised inside names the ledger's file (when it names none yet)."""
    try:
        yield
    except SteelyardError as exc:
        raise exc.located(file=loaded.path)


def prepare(path: str, loadout: str | None,
            compute: Callable[[Ledger, str | None], T]) -> tuple[LoadedLedger, T]:
    """Load `path`, check `loadout`, and return (loaded, compute(ledger, loadout)) with errors located."""
    loaded = load_for_cli(path)
    check_loadout(loaded, loadout)
    with located(loaded):
        return loaded, compute(loaded.ledger, loadout)
