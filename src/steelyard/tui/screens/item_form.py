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
                                            shape_fields, shape_keys)
from steelyard.tui.screens.answered_in_order import KEYS, InOrder
from steelyard.tui.text import clean, literal
from steelyard.tui.widgets.ordered_input import OrderedInput

#: up to this many items the whole edit is checked as each key is typed; above, in a thread
SYNC_ITEMS = 20_000


def fid(key: str) -> str:
    return "f-" + key.replace(".", "-")


@dataclass(frozen=True)
class FormResult:
    ledger: Ledger
    item: Item
    action: str  # "add" | "edit"
    summary: str


class ItemForm(InOrder, ModalScreen[FormResult | None]):
    # Tab is a priority binding so it moves focus in the order keys arrive: as a plain binding it runs
    # only after bubbling up from the field, when the keys typed after it are already in that field.
    BINDINGS = [*KEYS, Binding("escape", "cancel", "Cancel"),
                Binding("tab", "app.focus_next", "Next field", show=False, priority=True),
                Binding("shift+tab", "app.focus_previous", "Previous field", show=False, priority=True)]

    def __init__(self, ledger: Ledger, original: Item | None, preview: Callable[[Ledger], Text],
                 *, start: Item | None = None, quick: Callable[[Item], Text | None] | None = None) -> None:
        super().__init__()
        self.ledger = ledger
        self.original = original  # None: adding a new item
        self.preview = preview
        self.quick = quick  # the preview of one item's change without a new ledger (None: not covered)
        self._queued = False  # a check is queued behind the keys already waiting: one for the burst
        self.start = initial_fields(start if start is not None else original, ledger.units)
        self.values = dict(self.start)
        self.result: FormResult | None = None
        self.problem: SteelyardError | None = None
        self._generation = 0  # of the fields' text: a preview worked out for older text is dropped
        self.labels = self._labels()
        # Focus is on the first field from the moment the form is composed (Screen.AUTO_FOCUS), not
        # set later in on_mount: a key typed as the form opens must already have a field to land in.
        self.AUTO_FOCUS = "#" + fid("id" if original is None else "mass")

    # ----------------------------------------------------------------- build
    def _labels(self) -> dict[str, str]:
        """Each field's label as the form shows it: error messages name fields by these."""
        u = self.ledger.units
        lu, mu = pretty_unit(u.length), pretty_unit(u.mass)
        out = {"id": "id", "name": "name", "group": "group", "quantity": "quantity", "mass": f"mass [{mu}]",
               "density": "density", "x": f"x [{lu}]", "y": f"y [{lu}]", "z": f"z [{lu}]", "rotate": "turns",
               "kind": "shape", "axis": "shape axis", "variable": "variable"}
        for kind in kinds():
            unit = pretty_unit(u.inertia if kind == GIVEN_INERTIA else u.length)
            out.update({key: f"{label} [{unit}]" for key, label in shape_fields(kind)})
        return out

    def compose(self):
        what = "Add an item" if self.original is None else f"Edit item {clean(self.original.id)}"
        labels = self.labels
        with VerticalScroll(id="form-box", can_focus=False):
            yield Static(Text(what, style="bold") + Text(
                " · plain number = file units · or with a unit: 41.5 lb, 3 ft 2 in", style="dim"),
                id="form-title")
            with Grid(id="form-grid"):
                for key in ("id", "name", "group", "quantity", "mass", "density", "x", "y", "z", "rotate"):
                    yield Label(Text(labels[key]), classes="form-label")
                    placeholder = {"density": "e.g. 6 lb/gal", "rotate": "e.g. z 10, x -5", "group": "e.g. power/storage"}.get(key, "")
                    yield OrderedInput(self.start.get(key, ""), id=fid(key), compact=True, placeholder=placeholder)
                yield Label("shape", classes="form-label")
                yield Select([(k, k) for k in kinds()], value=self.start["kind"], allow_blank=False,
                             compact=True, id="f-kind")
                yield Label("shape axis", classes="form-label")
                yield Select([(a, a) for a in "xyz"], value=self.start["axis"], allow_blank=False,
                             compact=True, id="f-axis")
                yield Label("variable", classes="form-label")
                yield Select([("no: a fixed item", ""), ("yes: loadouts set its amount", "yes")],
                             value=self.start["variable"], allow_blank=False, compact=True, id="f-variable")
            # Every shape's inputs exist from the start and are shown or hidden: mounting them after the
            # form opened would let keys typed meanwhile land nowhere, or in the wrong field.
            with Grid(id="shape-grid"):
                for key in shape_keys():
                    yield Label(Text(labels[key]), classes="form-label", id="l-" + fid(key))
                    yield OrderedInput(self.values.get(key, ""), id=fid(key), compact=True,
                                placeholder="a, b, c" if key.endswith("size") or key.endswith("axes") else "")
            yield Static("", id="form-message")
            with Horizontal(id="form-buttons"):
                yield Button("Apply", id="form-apply", variant="primary", compact=True)
                yield Button("Cancel", id="form-cancel", compact=True)
            yield Static("", id="form-preview")

    def on_mount(self) -> None:
        self._show_shape(self.start["kind"])
        self.check()

    def _show_shape(self, kind: str) -> None:
        shown = {key for key, _ in shape_fields(kind)}
        for key in shape_keys():
            visible = key in shown
            self.query_one("#" + fid(key), Input).display = visible
            self.query_one("#l-" + fid(key), Label).display = visible
        self.query_one("#shape-grid", Grid).display = bool(shown)

    # ----------------------------------------------------------------- check
    def fields(self) -> dict[str, str]:
        out = dict(self.values)
        out["kind"] = str(self.query_one("#f-kind", Select).value)
        out["axis"] = str(self.query_one("#f-axis", Select).value)
        out["variable"] = str(self.query_one("#f-variable", Select).value)
        return out

    def check(self, *, wait: bool = False) -> None:
        """Check the fields at once (the ✓ / ✗ line follows every keystroke); then the whole edit.

        The fields are parsed here, in microseconds. A fixed item's preview
        is a delta on the other rows' sums (`_quick`, O(1) in the ledger's
        size). Otherwise building the edited
        ledger, checking its loadouts and rolling it up for the preview takes
        a fraction of a second on a ledger of 100,000 items, so there it runs
        in a thread (the newest keystroke wins) instead of holding up the
        next key; `wait` (Apply) runs it here so Apply sees this very text.
        """
        self._generation += 1
        fields = self.fields()
        try:
            item = item_from_fields(fields, self.original, self.ledger)
        except SteelyardError as exc:
            self._show_problem(exc)
            return
        self._show_problem(None)
        self.result = None
        if not wait and self._quick(fields, item):
            return
        if wait or len(self.ledger.items) <= SYNC_ITEMS:
            self._finish(self._generation, self._whole_edit(fields, item))
            return
        self._say("✓ all fields valid (checking loadouts, preview…)")
        gen = self._generation
        self.run_worker(lambda: self.app.call_from_thread(self._finish, gen, self._whole_edit(fields, item)),
                        thread=True, exclusive=True, group="form-preview", exit_on_error=False)

    def _quick(self, fields: dict[str, str], item: Item) -> bool:
        """Preview a keystroke as a delta (`state.form_preview`), without building the edited ledger.

        O(1) in the ledger's size, so it runs here, key by key. False when
        the delta does not cover the edit (a variable item): the whole edit
        is checked instead. Apply always builds and checks the whole edit.
        """
        if self.quick is None:
            return False
        try:
            check_loadouts(self.ledger, item)  # a fixed item: only "a loadout sets an amount of it"
            if self.original is not None and self.original.id != item.id:
                check_loadouts(self.ledger, item.evolve(id=self.original.id))
        except SteelyardError as exc:
            self._show_problem(exc)
            return True
        preview = self.quick(item)
        if preview is None:
            return False
        changed = self.original is None or bool(self._changed_fields(fields))
        self._say("✓ all fields valid" + ("" if changed else " (nothing changed yet)"))
        self._show_preview(preview)
        return True

    def _worded(self, key: str, text: str) -> str:
        """A field's text for the change log: a plain number with the unit the form reads it in (its label's),
        so "1.2 kg → 3.1" reads "1.2 kg → 3.1 lb"; a text with its own unit, or none to have, as typed."""
        text = text.strip()
        label = self.labels.get(key, "")
        if not text or not label.endswith("]"):
            return text
        try:
            float(text)
        except ValueError:
            return text
        return f"{text} {label[label.rindex('[') + 1:-1]}"

    def _changed_fields(self, fields: dict[str, str]) -> list[str]:
        return [k for k in fields if fields[k].strip() != self.start.get(k, "").strip()]

    def _say(self, message) -> None:
        """The one-line message under the fields; a layout only when its text wraps differently."""
        w = self.query_one("#form-message", Static)
        if str(w.content) != str(message):
            w.update(message, layout=self._wraps(w, message))

    def _show_preview(self, preview) -> None:
        """Repaint the preview; lay the form out again only when its number of lines changes."""
        w = self.query_one("#form-preview", Static)
        old = str(w.content)
        if old == str(preview):
            return
        w.update(preview, layout=self._wraps(w, preview) or self._wraps(w, old)
                 or str(preview).count("\n") != old.count("\n"))

    @staticmethod
    def _wraps(w: Static, text) -> bool:
        """Whether `text` may take more rows than its lines (or none): then the height may change."""
        lines = str(text).split("\n")
        width = w.content_region.width
        return not str(text) or width <= 0 or any(len(line) >= width for line in lines)

    def _whole_edit(self, fields: dict[str, str], item: Item):
        """(result, preview) or the SteelyardError: no widgets touched, so it may run in a thread."""
        try:
            if self.original is None:
                new = add_item(self.ledger, item)
            else:
                new = replace_item(self.ledger, self.original.id, item)
            check_loadouts(new, item)
        except SteelyardError as exc:
            return exc
        changed = self._changed_fields(fields)
        if self.original is None:
            summary = f"added {item.id}"
        elif not changed:
            summary = ""
        else:
            summary = f"edited {self.original.id}: " + "; ".join(
                f"{k} {self._worded(k, self.start.get(k, '')) or '—'} → {self._worded(k, fields[k]) or '—'}"
                for k in changed)
        result = FormResult(new, item, "add" if self.original is None else "edit", summary) if (
            self.original is None or changed) else None
        return result, self.preview(new)

    def _finish(self, generation: int, outcome) -> None:
        if generation != self._generation:
            return  # the fields changed since: a newer check is on its way
        if isinstance(outcome, SteelyardError):
            self._show_problem(outcome)
            return
        self.result, preview = outcome
        self._say("✓ all fields valid" + ("" if self.result else " (nothing changed yet)"))
        self._show_preview(preview)

    def _show_problem(self, exc: SteelyardError | None) -> None:
        """Mark the field to blame and say what is wrong, by the label the form shows; None clears."""
        for w in self.query(".bad"):
            w.remove_class("bad")
        self.problem = exc
        if exc is None:
            return
        self.result = None
        target = self.query(f"#{fid(exc.field)}") if exc.field else None
        if target:
            target.first().add_class("bad")
        where = f"{self.labels.get(exc.field, exc.field)}: " if exc.field else ""
        self._say(literal(f"✗ {where}{exc.message}", style="bold"))
        self._show_preview("")

    @on(Input.Changed)
    def _changed(self, event: Input.Changed) -> None:
        if not event.input.id:
            return
        self._take(event.input)
        self._queue_check()

    def _take(self, field: Input) -> None:
        self.values[field.id[2:].replace("-", ".", 1)] = field.value  # inverse of fid()

    def _queue_check(self) -> None:
        """Check once after the keys already queued: a burst of keys costs one check, not one per key."""
        if not self._queued:
            self._queued = True
            self.call_later(self._queued_check)

    def _queued_check(self) -> None:
        self._queued = False
        if self.is_attached and self.is_active:
            self.check()

    @on(Select.Changed, "#f-kind")
    def _kind(self, event: Select.Changed) -> None:
        self._show_shape(str(event.value))
        self.check()

    @on(Select.Changed, "#f-axis")
    @on(Select.Changed, "#f-variable")
    def _other(self, event) -> None:
        self.check()

    # ---------------------------------------------------------------- finish
    async def entered(self) -> None:
        """Enter in a field: Apply, on the fields as typed (their change messages may still be on the way)."""
        for field in self.query(Input):
            if field.id:
                self._take(field)
        self.action_apply()

    @on(Button.Pressed, "#form-apply")
    def action_apply(self) -> None:
        self.check(wait=True)
        if self.result is not None:
            self.dismiss(self.result)
        elif self.problem is None:
            self.dismiss(None)  # valid but unchanged
        else:
            self.app.bell()

    @on(Button.Pressed, "#form-cancel")
    def action_cancel(self) -> None:
        self.dismiss(None)
