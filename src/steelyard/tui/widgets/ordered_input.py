"""A text input that takes every key in the order it was typed.

Textual's Input inserts a printable key as soon as the key reaches it, but
runs its key bindings (backspace, delete, left, home, enter, ...) only once
the key has bubbled up to the App. Keys sent in a burst (a fast typist, a
paste without bracketing over SSH) are queued on the input before that, so
"88.5" after a backspace became "88." and the backspace ate the "5". This
input runs its own bindings as the key arrives, before the next key.
"""

from __future__ import annotations

from textual import events
from textual.geometry import Size
from textual.widget import Widget
from textual.widgets import Input


class OrderedInput(Input):
    async def _on_key(self, event: events.Key) -> None:
        bindings = [b for b in self._bindings.key_to_bindings.get(event.key, ()) if not b.priority]
        for binding in bindings:
            if self.check_action(binding.action, ()) is False:
                continue
            event.stop()
            event.prevent_default()
            self._restart_blink()
            await self.run_action(binding.action)
            return
        await super()._on_key(event)

    def _watch_value(self, value: str) -> None:
        """Input's own, without the screen layout its changed virtual width asks for on every key.

        A field of fixed size (CSS) only changes its scroll range: the new
        width is set quietly first, so Input's own assignment changes nothing
        and lays nothing out (a layout of the whole form per keystroke was
        most of a key's cost on the item form).
        """
        if not self.styles.auto_dimensions:
            self.set_reactive(Widget.virtual_size, Size(self.content_width, 1))
        super()._watch_value(value)
