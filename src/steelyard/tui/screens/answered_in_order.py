"""A dialog closed by Enter or Escape as the key arrives, so the keys typed after it reach the screen beneath.

A plain Enter runs where it lands: the dialog's input posts "submitted",
and the dialog closes only once that message has bubbled up. Keys typed
right behind the Enter (a fast typist, a paste over SSH) are by then
already queued on the input: they went into a field that was about to
close, and were lost, or they changed the answer after Enter was pressed.

Here Enter and Escape are priority bindings, run by the App in the order
keys arrive: the next key is not routed until the dialog is gone. Before
it reads its fields, Enter waits until each field has taken the keys that
were sent to it before the Enter (the fields' own queues are first in,
first out), so the answer is exactly what was typed up to the Enter.
"""

from __future__ import annotations

import asyncio

from textual.binding import Binding
from textual.widgets import Input

#: for a dialog's BINDINGS: Enter answers (`answer`), Escape cancels (`cancel`); both as the key arrives
KEYS = [Binding("escape", "cancel", "Cancel", priority=True),
        Binding("enter", "answer", "Answer", show=False, priority=True)]


async def typed_so_far(screen) -> None:
    """Return once every input on `screen` has handled the keys queued on it before this call."""
    waits = []
    for field in screen.query(Input):
        done = asyncio.Event()
        if field.call_later(done.set):  # False: the field is closed and takes no more keys
            waits.append(done)
    for done in waits:
        await done.wait()
