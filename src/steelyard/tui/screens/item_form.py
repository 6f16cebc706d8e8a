"""The item form: every field takes units, is checked as you type, and previews the effect.

Nothing reaches the ledger until Apply (or Enter) with every field valid;
Escape leaves it untouched. The form builds the new ledger through
`form_values` and `edits` and asks the caller's `preview` for the totals,
so it never computes mass properties itself.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

from rich.text import Text
from textual import on
from textual.binding import Binding
from textual.containers import Grid, Horizontal, VerticalScroll
from textual.screen import ModalScreen
from textual.widgets import Button, Input, Label, Select, Static

from steelyard.core.display import pretty_unit
from steelyard.core.errors import SteelyardError
from steelyard.core.document.model import Item, Ledger
from steelyard.tui.state.edits import add_item, replace_item
from steelyard.tui.state.form_values import (GIVEN_INERTIA, check_loadouts, initial_fields, item_from_fields, kinds,
                          shape_fields)
from steelyard.tui.text import clean, literal

def fid(key: str) -> str:
    return "f-" + key.replace(".", "-")


@dataclass(frozen=True)
class FormResult:
    ledger: Ledger
    item: Item
    action: str  # "add" | "edit"
    summary: str


class ItemForm(ModalScreen[FormResult | None]):
    BINDINGS = [Binding("escape", "cancel", "Cancel")]

    def __init__(self, ledger: Ledger, original: Item | None, preview: Callable[[Ledger], Text],
                 *, start: Item | None = None) -> None:
        super().__init__()
        self.ledger = ledger
        self.original = original  # None: adding a new item
        self.preview = preview
        self.start = initial_fields(start if start is not None else original, ledger.units)
        self.values = dict(self.start)
        self.result: FormResult | None = None
        self.problem: SteelyardError | None = None

    # ----------------------------------------------------------------- build
    def compose(self):
        u = self.ledger.units
        lu, mu = pretty_unit(u.length), pretty_unit(u.mass)
        what = "Add an item" if self.original is None else f"Edit item {clean(self.original.id)}"
        with VerticalScroll(id="form-box"):
            yield Static(Text(what, style="bold") + Text(
                " · plain number = file units · or with a unit: 41.5 lb, 3 ft 2 in", style="dim"),
                id="form-title")
            with Grid(id="form-grid"):
                for key, label in (("id", "id"), ("name", "name"), ("group", "group"), ("quantity", "quantity"),
                                   ("mass", f"mass [{mu}]"),
                                   ("density", "density"), ("x", f"x [{lu}]"),
                                   ("y", f"y [{lu}]"), ("z", f"z [{lu}]"), ("rotate", "turns")):
                    yield Label(Text(label), classes="form-label")
                    placeholder = {"density": "e.g. 6 lb/gal", "rotate": "e.g. z 10, x -5", "group": "e.g. power/storage"}.get(key, "")
                    yield Input(self.start.get(key, ""), id=fid(key), compact=True, placeholder=placeholder)
                yield Label("shape", classes="form-label")
                yield Select([(k, k) for k in kinds()], value=self.start["kind"], allow_blank=False,
                             compact=True, id="f-kind")
                yield Label("axis", classes="form-label")
                yield Select([(a, a) for a in "xyz"], value=self.start["axis"], allow_blank=False,
                             compact=True, id="f-axis")
                yield Label("variable", classes="form-label")
                yield Select([("no: fixed item", ""), ("yes: amount set by loadouts", "yes")],
                             value=self.start["variable"], allow_blank=False, compact=True, id="f-variable")
            yield Grid(id="shape-grid")
            yield Static("", id="form-message")
            yield Static("", id="form-preview")
            with Horizontal(id="form-buttons"):
                yield Button("Apply", id="form-apply", variant="primary", compact=True)
                yield Button("Cancel", id="form-cancel", compact=True)

    async def on_mount(self) -> None:
        await self._shape_inputs(self.start["kind"])
        self.query_one("#" + fid("id" if self.original is None else "mass"), Input).focus()
        self.check()

    async def _shape_inputs(self, kind: str) -> None:
        grid = self.query_one("#shape-grid", Grid)
        await grid.remove_children()
        unit = pretty_unit(self.ledger.units.inertia if kind == GIVEN_INERTIA else self.ledger.units.length)
        widgets = []
        for key, label in shape_fields(kind):
            widgets.append(Label(Text(f"{label} [{unit}]"), classes="form-label"))
            widgets.append(Input(self.values.get(key, ""), id=fid(key), compact=True,
                                 placeholder="a, b, c" if key.endswith("size") or key.endswith("axes") else ""))
        grid.display = bool(widgets)
        if widgets:
            await grid.mount_all(widgets)

    # ----------------------------------------------------------------- check
    def fields(self) -> dict[str, str]:
        out = dict(self.values)
        out["kind"] = str(self.query_one("#f-kind", Select).value)
        out["axis"] = str(self.query_one("#f-axis", Select).value)
        out["variable"] = str(self.query_one("#f-variable", Select).value)
        return out

    def check(self) -> None:
        """Rebuild the item from the fields; show the first problem, or the preview."""
        for w in self.query(Input):
            w.remove_class("bad")
        message = self.query_one("#form-message", Static)
        preview = self.query_one("#form-preview", Static)
        fields = self.fields()
        try:
            item = item_from_fields(fields, self.original, self.ledger)
            if self.original is None:
                new = add_item(self.ledger, item)
            else:
                new = replace_item(self.ledger, self.original.id, item)
            check_loadouts(new, item)
        except SteelyardError as exc:
            self.result, self.problem = None, exc
            target = self.query(f"#{fid(exc.field)}") if exc.field else None
            if target:
                target.first().add_class("bad")
            where = f"{exc.field}: " if exc.field else ""
            message.update(literal(f"✗ {where}{exc.message}", style="bold"))
            preview.update("")
            return
        self.problem = None
        changed = [k for k in fields if fields[k].strip() != self.start.get(k, "").strip()]
        if self.original is None:
            summary = f"added {item.id}"
        elif not changed:
            summary = ""
        else:
            summary = f"edited {self.original.id}: " + "; ".join(
                f"{k} {self.start.get(k, '') or '—'} → {fields[k] or '—'}" for k in changed)
        self.result = FormResult(new, item, "add" if self.original is None else "edit", summary) if (
            self.original is None or changed) else None
        message.update("✓ all fields valid" + ("" if self.result else " (nothing changed yet)"))
        preview.update(self.preview(new))

    @on(Input.Changed)
    def _changed(self, event: Input.Changed) -> None:
        if not event.input.id:
            return
        self.values[event.input.id[2:].replace("-", ".", 1)] = event.value  # inverse of fid()
        self.check()

    @on(Select.Changed, "#f-kind")
    async def _kind(self, event: Select.Changed) -> None:
        await self._shape_inputs(str(event.value))
        self.check()

    @on(Select.Changed, "#f-axis")
    @on(Select.Changed, "#f-variable")
    def _other(self, event) -> None:
        self.check()

    # ---------------------------------------------------------------- finish
    @on(Input.Submitted)
    @on(Button.Pressed, "#form-apply")
    def action_apply(self) -> None:
        self.check()
        if self.result is not None:
            self.dismiss(self.result)
        elif self.problem is None:
            self.dismiss(None)  # valid but unchanged
        else:
            self.app.bell()

    @on(Button.Pressed, "#form-cancel")
    def action_cancel(self) -> None:
        self.dismiss(None)
