"""The weighing form: scale points, what was on board and what was missing, reduced live.

Every change re-reduces the weighing through `weighing_values` (the same
code `steelyard weigh` runs) and shows the net readings, the weighed and the
empty mass and CG, and what the replaced item becomes; the first problem is
named instead when there is one. Apply dismisses with a `WeighingDone`; the
App applies it through the session like any edit (action "weighing").
Escape leaves the ledger untouched.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

from rich.text import Text
from textual import on
from textual.binding import Binding
from textual.containers import Grid, Horizontal, Vertical, VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Button, Input, Label, Static

from steelyard.core.display import DisplayUnits, pretty_unit
from steelyard.core.errors import SteelyardError
from steelyard.core.document.model import Ledger
from steelyard.io.report.weighing import Weighing, weighing_summary
from steelyard.tui.screens.answered_in_order import KEYS, InOrder, typed_so_far
from steelyard.tui.text import clean, literal
from steelyard.tui.widgets.ordered_input import OrderedInput
from steelyard.tui.state.weighing_values import (ADJUST_FIELDS, POINT_FIELDS, WeighingFields, fields_from_table, reduce_fields,
                              result_text, weighed)

TITLES = {"point": "Scale points (net = reading − tare)",
          "on_board": "On board at the weighing, not part of the empty vehicle (taken off)",
          "missing": "Missing at the weighing, part of the empty vehicle (added back)"}
ADD_LABEL = {"point": "+ point", "on_board": "+ on board", "missing": "+ missing"}


@dataclass(frozen=True)
class WeighingDone:
    ledger: Ledger  # the new ledger: empty item replaced, [weighing] kept
    item: str
    summary: str


class WeighingForm(InOrder, ModalScreen[WeighingDone | None]):
    # Tab as a priority binding moves focus in the order keys arrive (see item_form)
    BINDINGS = [*KEYS, Binding("escape", "cancel", "Cancel"),
                Binding("tab", "app.focus_next", "Next field", show=False, priority=True),
                Binding("shift+tab", "app.focus_previous", "Previous field", show=False, priority=True)]

    def __init__(self, ledger: Ledger) -> None:
        super().__init__()
        self.ledger = ledger
        self.du = DisplayUnits.choose(ledger.units, None)  # the form speaks the file's units
        self.fields: WeighingFields = fields_from_table(ledger.weighing, ledger)
        self.reduced: tuple[dict, Weighing] | None = None
        self.problem: str | None = None

    # ----------------------------------------------------------------- build
    def compose(self):
        mu, lu = pretty_unit(self.du.mass), pretty_unit(self.du.length)
        with Vertical(id="weigh-box"):
            yield Static(Text("Weighing → empty vehicle", style="bold") + Text(
                f" · numbers in {mu}, {lu} unless given a unit (30 gal)", style="dim"),
                id="weigh-title")
            with VerticalScroll(id="weigh-inputs"):
                for kind in ("point", "on_board", "missing"):
                    yield Static(Text(TITLES[kind], style="bold"), classes="weigh-section")
                    with Grid(id=f"weigh-{kind}",
                              classes=f"weigh-grid weigh-{'points' if kind == 'point' else 'adjust'}"):
                        yield from self._header(kind)
                        for row in range(len(self.fields.rows(kind))):
                            yield from self._row_widgets(kind, row)
                    yield Button(ADD_LABEL[kind], id=f"weigh-add-{kind}", compact=True, classes="weigh-add")
                with Grid(id="weigh-more"):
                    yield Label("replaces (item id)", classes="form-label")
                    yield OrderedInput(self.fields.replaces or "", id="weigh-replaces", compact=True)
                    yield Label(f"vertical CG [{lu}]", classes="form-label")
                    yield OrderedInput(self.fields.vertical_cg, id="weigh-vertical", compact=True,
                                placeholder="optional")
            yield Static("", id="weigh-message")
            yield Static("", id="weigh-result")
            with Horizontal(id="weigh-buttons"):
                yield Button("Apply", id="weigh-apply", variant="primary", compact=True)
                yield Button("Cancel", id="weigh-cancel", compact=True)

    def _header(self, kind: str):
        mu, lu = pretty_unit(self.du.mass), pretty_unit(self.du.length)
        words = ({"name": "name", "x": f"x [{lu}]", "y": "y", "z": "z", "reading": f"reading [{mu}]",
                  "tare": "tare"} if kind == "point" else
                 {"name": "name", "item": "item id", "amount": "mass/volume", "density": "density",
                  "x": f"x [{lu}]", "y": "y", "z": "z"})
        for key in (POINT_FIELDS if kind == "point" else ADJUST_FIELDS):
            yield Label(Text(words[key]), classes="form-label")
        if kind == "point":
            yield Label(Text(f"net [{mu}]"), classes="form-label")

    def _row_widgets(self, kind: str, row: int):
        values = self.fields.rows(kind)[row]
        for key in (POINT_FIELDS if kind == "point" else ADJUST_FIELDS):
            yield OrderedInput(values.get(key, ""), id=f"w-{kind}-{row}-{key}", compact=True)
        if kind == "point":
            yield Static("", id=f"w-point-{row}-net", classes="weigh-net")

    async def on_mount(self) -> None:
        first = self.query("#w-point-0-reading")
        (first.first() if first else self.query_one("#weigh-replaces")).focus()
        self.check()

    # ----------------------------------------------------------------- check
    def check(self) -> None:
        """Reduce what is typed; show the result, or the first problem (and mark its field)."""
        for w in self.query(Input):
            w.remove_class("bad")
        message = self.query_one("#weigh-message", Static)
        result = self.query_one("#weigh-result", Static)
        for net in self.query(".weigh-net"):
            net.update("")
        try:
            table, w = reduce_fields(self.ledger, self.fields)
        except SteelyardError as exc:
            self.reduced, self.problem = None, str(exc.message)
            self._mark(exc)
            where = f"{exc.subject}: " if exc.subject else ""
            message.update(literal(f"✗ {where}{exc.field + ': ' if exc.field else ''}{exc.message}", style="bold"))
            result.update("")
            return
        self.reduced, self.problem = (table, w), None
        rows = [k for k, r in enumerate(self.fields.point) if any(v.strip() for v in r.values())]
        for k, net in zip(rows, w.result.net):
            self.query_one(f"#w-point-{k}-net", Static).update(self.du.num(net, 'mass'))
        ok = w.new is not None
        message.update("✓ " + ("Apply replaces the item with the weighed empty vehicle" if ok else
                               "valid; name the item it replaces to apply it"))
        result.update(result_text(self.ledger, w, self.du))

    def _mark(self, exc: SteelyardError) -> None:
        """Mark the field an error names ("weighing point 'nose'", field "tare") where it can be found."""
        if exc.field == "replaces":
            self.query_one("#weigh-replaces").add_class("bad")
            return
        if exc.field == "vertical_cg":
            self.query_one("#weigh-vertical").add_class("bad")
            return
        subject = exc.subject or ""
        for kind in ("point", "on_board", "missing"):
            if not subject.startswith(f"weighing {kind}"):
                continue
            for k, row in enumerate(self.fields.rows(kind)):
                name = row.get("name", "").strip()
                if subject.endswith(f"#{k + 1}") or (name and subject.endswith(repr(name))):
                    key = {"at": "x", "mass": "amount", "volume": "amount", "reading": "reading"}.get(
                        exc.field or "", exc.field or "")
                    found = self.query(f"#w-{kind}-{k}-{key}")
                    if found:
                        found.first().add_class("bad")
                    return

    @on(Input.Changed)
    def _changed(self, event: Input.Changed) -> None:
        self._take(event.input.id or "", event.value)
        self.check()

    def _take(self, wid: str, value: str) -> None:
        """Note a field's text in `fields` (from its change message, or read off the field by Apply)."""
        if wid == "weigh-replaces":
            self.fields = replace(self.fields, replaces=value.strip() or None)
        elif wid == "weigh-vertical":
            self.fields = replace(self.fields, vertical_cg=value)
        elif wid.startswith("w-"):
            _, kind, row, key = wid.split("-", 3)
            self.fields = self.fields.with_value(kind, int(row), key, value)

    async def entered(self) -> None:
        self.focus_next()  # in a field: on to the next one

    @on(Button.Pressed, ".weigh-add")
    async def _add_row(self, event: Button.Pressed) -> None:
        kind = (event.button.id or "")[len("weigh-add-"):]
        self.fields = self.fields.with_row(kind)
        row = len(self.fields.rows(kind)) - 1
        widgets = list(self._row_widgets(kind, row))
        await self.query_one(f"#weigh-{kind}", Grid).mount_all(widgets)
        widgets[0].focus()
        self.check()

    # ---------------------------------------------------------------- finish
    @on(Button.Pressed, "#weigh-apply")
    async def action_apply(self) -> None:
        # the fields as typed: keys sent to a field before the press are taken first, and its text is
        # read off it (its change message may still be on the way)
        await typed_so_far(self)
        for field in self.query(Input):
            self._take(field.id or "", field.value)
        self.check()
        if self.reduced is None or self.reduced[1].new is None:
            self.app.bell()
            if self.reduced is not None:
                self.query_one("#weigh-replaces").add_class("bad")
                self.query_one("#weigh-message", Static).update(
                    literal("✗ replaces: name the ledger item the weighed empty vehicle replaces", style="bold"))
            return
        table, w = self.reduced
        try:
            new = weighed(self.ledger, table, w)
        except SteelyardError as exc:
            self.query_one("#weigh-message", Static).update(literal(f"✗ {exc}", style="bold"))
            return
        self.dismiss(WeighingDone(new, w.replaces, clean(weighing_summary(self.ledger, w))))

    @on(Button.Pressed, "#weigh-cancel")
    def action_cancel(self) -> None:
        self.dismiss(None)
