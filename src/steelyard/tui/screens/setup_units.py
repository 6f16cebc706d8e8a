"""The new-ledger dialog: the file's units (mass, length, inertia) and its body frame.

Shown when the editor opens a file that does not exist yet, and from the
set-up list. The choices go through the reader's own `read_units` and
`read_frame` (the right-handed check included), so the dialog cannot make
what a file would refuse. The units say what bare numbers in the file mean
and the frame which way +x, +y, +z point, so both can be changed only while
the ledger holds no numbers that depend on them (no items, envelopes,
limits, MAC, allocations or weighing); converting a full ledger's units is
another job.
"""

from __future__ import annotations

from dataclasses import dataclass

from rich.text import Text
from textual import on
from textual.binding import Binding
from textual.containers import Grid, Horizontal, Vertical
from textual.screen import ModalScreen
from textual.widgets import Button, Label, Select, Static

from steelyard.core.display import pretty_unit
from steelyard.core.document.model import DIRECTIONS, FileUnits, Frame, Ledger
from steelyard.core.errors import SteelyardError
from steelyard.io.ledger.read import read_frame, read_units
from steelyard.tui.text import literal

MASS_UNITS = ("kg", "g", "lb", "oz")
LENGTH_UNITS = ("m", "mm", "cm", "in", "ft")
INERTIA_UNITS = ("kg*m**2", "kg*mm**2", "g*mm**2", "g*cm**2", "lb*in**2", "lb*ft**2", "oz*in**2", "slug*ft**2")


@dataclass(frozen=True)
class UnitsDone:
    ledger: Ledger
    summary: str


def units_locked(ledger: Ledger) -> str | None:
    """Why units and frame cannot change now (None: they can)."""
    held = [name for name, v in (("items", ledger.items), ("envelopes", ledger.envelopes),
                                 ("limits", ledger.limits), ("[mac]", ledger.mac),
                                 ("allocations", ledger.allocations), ("[weighing]", ledger.weighing)) if v]
    if not held:
        return None
    return (f"the ledger holds {', '.join(held)} whose numbers are written in these units and this frame; "
            "they are fixed once the first such entry exists")


def _options(units) -> list[tuple[str, str]]:
    return [(pretty_unit(u), u) for u in units]


class UnitsForm(ModalScreen[UnitsDone | None]):
    DEFAULT_CSS = """
    UnitsForm { align: center middle; }
    #units-box { width: 100%; max-width: 72; height: auto; max-height: 100%; border: thick $primary;
                 background: $surface; padding: 0 1; }
    #units-grid { grid-size: 4; grid-columns: 9 1fr 4 1fr; grid-rows: 3; grid-gutter: 0 1; height: auto; }
    #units-grid Label { color: $text-muted; padding-top: 1; }
    #units-message { height: auto; }
    #units-buttons { height: 1; margin-top: 1; }
    #units-buttons Button { margin-right: 2; }
    """
    BINDINGS = [Binding("escape", "cancel", "Cancel"), Binding("ctrl+s", "apply", "Apply", show=False)]

    def __init__(self, ledger: Ledger, *, new: bool = False) -> None:
        super().__init__()
        self.ledger = ledger
        self.new = new
        self.locked = units_locked(ledger)
        self.result: tuple[FileUnits, Frame] | None = None
        self._inertia_touched = ledger.units.inertia != FileUnits().inertia

    def compose(self):
        u, f = self.ledger.units, self.ledger.frame
        title = "New ledger: units and frame" if self.new else "Units and frame"
        with Vertical(id="units-box"):
            yield Static(Text(title, style="bold"))
            yield Static(Text("What bare numbers in the file mean, and which way each body axis points "
                              "(right-handed).", style="dim"))
            with Grid(id="units-grid"):
                for key, units, current, axis, direction in (
                        ("mass", MASS_UNITS, u.mass, "x", f.x), ("length", LENGTH_UNITS, u.length, "y", f.y),
                        ("inertia", INERTIA_UNITS, u.inertia, "z", f.z)):
                    yield Label(key)
                    choices = _options(units if current in units else (current, *units))
                    yield Select(choices, value=current, allow_blank=False, id=f"units-{key}",
                                 disabled=self.locked is not None)
                    yield Label(f"+{axis}")
                    yield Select([(d, d) for d in DIRECTIONS], value=direction, allow_blank=False,
                                 id=f"frame-{axis}", disabled=self.locked is not None)
            yield Static("", id="units-message")
            with Horizontal(id="units-buttons"):
                yield Button("Apply", id="units-apply", variant="primary", compact=True,
                             disabled=self.locked is not None)
                yield Button("Close" if self.locked else "Cancel", id="units-cancel", compact=True)

    def on_mount(self) -> None:
        self.query_one("#units-mass" if self.locked is None else "#units-cancel").focus()
        self.check()

    def _value(self, wid: str) -> str:
        return str(self.query_one(f"#{wid}", Select).value)

    def check(self) -> None:
        message = self.query_one("#units-message", Static)
        self.result = None
        if self.locked is not None:
            message.update(literal(f"Fixed: {self.locked}.", style="bold"))
            return
        units = {k: self._value(f"units-{k}") for k in ("mass", "length", "inertia")}
        frame = {k: self._value(f"frame-{k}") for k in ("x", "y", "z")}
        try:
            fu = read_units(units, "form")
            fr = read_frame(frame, "form")
        except SteelyardError as exc:
            message.update(literal(f"✗ {exc.subject}: {exc.field + ': ' if exc.field else ''}{exc.message}",
                                   style="bold"))
            return
        self.result = (FileUnits(fu.mass, fu.length, fu.inertia, self.ledger.units.volume,
                                 self.ledger.units.density), fr)
        message.update(f"✓ right-handed: x {fr.x}, y {fr.y}, z {fr.z}; Apply (or ctrl+s)")

    @on(Select.Changed)
    def _changed(self, event: Select.Changed) -> None:
        wid = event.select.id or ""
        if wid == "units-inertia" and event.value != f"{self._value('units-mass')}*{self._value('units-length')}**2":
            self._inertia_touched = True
        elif wid in ("units-mass", "units-length") and not self._inertia_touched:
            suggested = f"{self._value('units-mass')}*{self._value('units-length')}**2"
            if suggested in INERTIA_UNITS:
                self.query_one("#units-inertia", Select).value = suggested
        self.check()

    @on(Button.Pressed, "#units-apply")
    def action_apply(self) -> None:
        self.check()
        if self.result is None:
            self.app.bell()
            return
        units, frame = self.result
        if units == self.ledger.units and frame == self.ledger.frame:
            self.dismiss(None)
            return
        new = self.ledger.evolve(units=units, frame=frame)
        self.dismiss(UnitsDone(new, f"units {units.mass}, {units.length}, {units.inertia}; "
                                    f"frame x {frame.x}, y {frame.y}, z {frame.z}"))

    @on(Button.Pressed, "#units-cancel")
    def action_cancel(self) -> None:
        self.dismiss(None)
