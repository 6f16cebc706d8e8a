"""Enter in a dialog's field, run as the key arrives, so the keys typed after it go where Enter sent them.

A plain Enter runs where it lands: the field posts "submitted", and the
dialog answers (closes, applies, moves to the next field) only once that
message has bubbled up. Keys typed right behind the Enter (a fast typist, a
paste over SSH) are by then already queued on the field: they went into a
dialog that was closing and were lost, or into the field Enter had left.

`InOrder` makes Enter and Escape in a field priority bindings, run by
the App in the order keys arrive, so the next key is not routed until
Enter has done its work. Before that work Enter waits until each field has
taken the keys sent to it before the Enter (a field's queue is first in,
first out): the dialog sees exactly what was typed up to the Enter.
"""

from __future__ import annotations

import asyncio

from textual.binding import Binding
from textual.widgets import Input, TextArea

#: for a dialog's BINDINGS, beside its own Escape binding: in a field, Enter runs `entered` and Escape
#: `action_cancel`, both as the key arrives (elsewhere, on a button or an open list, the keys keep their meaning)
KEYS = [Binding("escape", "escape_in_field", show=False, priority=True),
        Binding("enter", "enter_in_field", show=False, priority=True)]


async def typed_so_far(screen) -> None:
    """Return once every field (line or text area) on `screen` has handled the keys queued on it
    before this call."""
    waits = []
    for field in [*screen.query(Input), *screen.query(TextArea)]:
        done = asyncio.Event()
        if field.call_later(done.set):  # False: the field is closed and takes no more keys
            waits.append(done)
    for done in waits:
        await done.wait()


class InOrder:
    """Mixin for a ModalScreen with KEYS in its BINDINGS and an `action_cancel`; the screen defines
    `entered` (what Enter in a field does: answer, apply, or move to the next field)."""

    def check_action(self, action: str, parameters: tuple) -> bool | None:
        if action in ("enter_in_field", "escape_in_field"):
            return isinstance(self.focused, Input)
        return super().check_action(action, parameters)

    async def action_enter_in_field(self) -> None:
        await typed_so_far(self)
        await self.entered()

    def action_escape_in_field(self) -> None:
        self.action_cancel()
