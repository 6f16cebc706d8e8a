"""One error family for the whole program.

Every problem a user can cause (a bad file, a bad value, an unknown loadout)
is a `SteelyardError`. Its text is one line that says where the problem is
(file, the item/loadout/envelope it belongs to, the field) and what is wrong,
so the CLI can print it as is and exit 2, and the TUI can show it inline.
"""

from __future__ import annotations

import re
from reprlib import Repr

_CONTROL = re.compile(r"[\x00-\x1f\x7f-\x9f]")


class SteelyardError(Exception):
    """A problem with user input, located as precisely as we know."""

    def __init__(
        self,
        message: str,
        *,
        file: str | None = None,
        subject: str | None = None,
        field: str | None = None,
    ) -> None:
        super().__init__(message)
        self.message = message
        self.file = file
        self.subject = subject
        self.field = field

    def located(self, *, file: str | None = None, subject: str | None = None,
                field: str | None = None) -> "SteelyardError":
        """Fill in location parts that are still unknown; returns self."""
        if self.file is None and file is not None:
            self.file = file
        if self.subject is None and subject is not None:
            self.subject = subject
        if self.field is None and field is not None:
            self.field = field
        return self

    def __str__(self) -> str:
        parts = [p for p in (self.file, _short(self.subject), _short(self.field)) if p]
        text = ": ".join(parts + [_short(self.message, 240)])
        # Always one line, and no raw control characters reach a terminal.
        return _CONTROL.sub(lambda m: f"\\x{ord(m.group(0)):02x}", text)


class UnitError(SteelyardError):
    """A value whose unit is unknown or of the wrong dimension."""


class InertiaError(SteelyardError):
    """An inertia that no physical body can have."""


class FormatError(SteelyardError):
    """The file is not a steelyard ledger (not TOML, wrong version...)."""


def _short(text: str | None, limit: int = 120) -> str | None:
    """A message stays readable even when a user's value is megabytes long."""
    if text is None or len(text) <= limit:
        return text
    return text[: limit - 1] + "…"


def item_subject(item_id: object) -> str:
    return f"item {item_id!r}" if isinstance(item_id, str) else f"item #{item_id}"


class _Said(Repr):
    """repr, shortened, and with numpy values shown as the plain numbers they are:
    a message says "got -225.0", never "got np.float64(-225.0)"."""

    def repr1(self, x, level):
        if type(x).__module__ == "numpy" and hasattr(x, "tolist"):
            try:
                x = x.tolist()  # a numpy scalar -> int/float/bool; an array -> nested lists
            except Exception:  # pragma: no cover - an exotic numpy object: its own repr
                pass
        return super().repr1(x, level)


_REPR = _Said()
_REPR.maxstring, _REPR.maxlong, _REPR.maxother = 80, 40, 80
#: a value quoted in an error message, shortened when huge (a 400-digit number, a 4 MB name)
said = _REPR.repr
