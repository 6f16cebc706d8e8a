"""The placement form: where another ledger file lands in this one, checked as you type, with a preview.

Fields: id, file (relative to this ledger), group, at x/y/z (file length
units, or with a unit), mirror, turns. Every keystroke rebuilds the
[[assembly]] table, checks it with the reader's own rules, reads the placed
file (cached until it changes on disk; a cycle back to this file is
refused) and splices the new ledger, whose ΔCG and margins the caller's
`preview` shows. Nothing changes until Apply with every field valid;
Remove takes the placement out (an edit too: undo brings it back).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

from rich.text import Text
from textual import on
from textual.binding import Binding
from textual.containers import Grid, Horizontal, VerticalScroll
from textual.screen import ModalScreen
from steelyard.tui.widgets.ordered_input import OrderedInput
from textual.widgets import Button, Input, Label, Select, Static

from steelyard.core.display import pretty_unit
from steelyard.core.document.model import Ledger
from steelyard.core.errors import SteelyardError
from steelyard.tui.state.assembly import fields_of, placement_edit, placement_removed, read_child, table_from_fields
from steelyard.tui.screens.answered_in_order import KEYS, InOrder
from steelyard.tui.text import clean, literal


@dataclass(frozen=True)
class PlacementResult:
    ledger: Ledger
    assembly_id: str
    summary: str
    before: dict | None  # the [[assembly]] table before (None: added)
    after: dict | None  # after (None: removed)


def _at_text(table: dict) -> str:
    return ", ".join(str(v) for v in table.get("at", []))


class AssemblyForm(InOrder, ModalScreen[PlacementResult | None]):
    DEFAULT_CSS = """
    AssemblyForm { align: center middle; }
    #asm-box { width: 100%; max-width: 100; height: auto; max-height: 100%; border: thick $primary;
               background: $surface; padding: 0 1; }
    #asm-grid { grid-size: 4; grid-columns: 10 1fr 10 1fr; grid-rows: 1; grid-gutter: 0 1; height: auto; }
    #asm-grid .asm-label { color: $text-muted; }
    #asm-grid Input.bad { background: $error 30%; }
    #asm-message { margin-top: 1; height: auto; }
    #asm-preview { height: auto; }
    #asm-buttons { height: 1; margin-top: 1; }
    #asm-buttons Button { margin-right: 2; }
    """
    # Tab moves focus in the order keys arrive (a burst or a paste over SSH lands field by field)
    BINDINGS = [*KEYS, Binding("escape", "cancel", "Cancel"),
                Binding("tab", "app.focus_next", "Next field", show=False, priority=True),
                Binding("shift+tab", "app.focus_previous", "Previous field", show=False, priority=True)]

    def __init__(self, ledger: Ledger, parent_path: str, table: dict | None, preview: Callable[[Ledger], Text]):
        super().__init__()
        self.ledger, self.parent_path, self.original, self.preview = ledger, parent_path, table, preview
        self.start = fields_of(table, ledger.units.length)
        self.values = dict(self.start)
        self.result: PlacementResult | None = None
        self.problem: SteelyardError | None = None
        self._children: dict = {}  # (realpath, mtime) -> Child: the file is read once per change on disk

    def compose(self):
        lu = pretty_unit(self.ledger.units.length)
        what = "Place another ledger file here" if self.original is None else \
            f"Placement {clean(str(self.original.get('id')))}"
        with VerticalScroll(id="asm-box"):
            yield Static(Text(what, style="bold") + Text(" · at in file units, or with a unit: 3 ft 2 in",
                                                         style="dim"), id="asm-title")
            with Grid(id="asm-grid"):
                for key, label, hint in (("id", "id", "no '/'"), ("file", "file", "pods/pod.toml"),
                                         ("group", "group", "e.g. propulsion"), ("rotate", "turns", "z 45, x -5"),
                                         ("x", f"at x [{lu}]", ""), ("y", f"at y [{lu}]", ""),
                                         ("z", f"at z [{lu}]", "")):
                    yield Label(Text(label), classes="asm-label")
                    yield OrderedInput(self.start[key], id=f"a-{key}", compact=True, placeholder=hint)
                yield Label("mirror", classes="asm-label")
                yield Select([("none", ""), ("negate x", "x"), ("negate y", "y"), ("negate z", "z")],
                             value=self.start["mirror"], allow_blank=False, compact=True, id="a-mirror")
            yield Static("", id="asm-message")
            yield Static("", id="asm-preview")
            with Horizontal(id="asm-buttons"):
                yield Button("Apply", id="asm-apply", variant="primary", compact=True)
                if self.original is not None:
                    yield Button("Remove placement", id="asm-remove", compact=True)
                yield Button("Cancel", id="asm-cancel", compact=True)

    def on_mount(self) -> None:
        self.query_one("#a-id" if self.original is None else "#a-x", Input).focus()
        self.check()

    # ----------------------------------------------------------------- check
    def fields(self) -> dict[str, str]:
        out = dict(self.values)
        out["mirror"] = str(self.query_one("#a-mirror", Select).value)
        return out

    def check(self) -> None:
        for w in self.query(Input):
            w.remove_class("bad")
        message, preview = self.query_one("#asm-message", Static), self.query_one("#asm-preview", Static)
        fields = self.fields()
        original_id = None if self.original is None else str(self.original.get("id"))
        try:
            table = table_from_fields(fields, self.original, self.start)
            if not table["id"]:
                raise SteelyardError("required: a name for this placement (its items are named id/item)",
                                     subject="assembly", field="id")
            child = read_child(self.parent_path, table["file"], cache=self._children,
                               subject=f"assembly {table['id']!r}")
            new = placement_edit(self.ledger, original_id, table, child, self.parent_path)
        except SteelyardError as exc:
            self.result, self.problem = None, exc
            field = {"at": "x"}.get(exc.field or "", exc.field)
            target = self.query(f"#a-{field}") if field else None
            if target:
                target.first().add_class("bad")
            where = f"{exc.field}: " if exc.field else ""
            message.update(literal(f"✗ {where}{exc.message}", style="bold"))
            preview.update("")
            return
        self.problem = None
        changed = [k for k in fields if fields[k].strip() != self.start.get(k, "").strip()]
        if self.original is None:
            summary = f"placed {table['file']} as {table['id']} at {_at_text(table)}"
            self.result = PlacementResult(new, table["id"], summary, None, table)
        elif changed:
            summary = f"placement {original_id}: " + "; ".join(
                f"{'at ' + k if k in 'xyz' else k} {self.start.get(k, '') or '—'} → {fields[k] or '—'}"
                for k in changed)
            self.result = PlacementResult(new, table["id"], summary, dict(self.original), table)
        else:
            self.result = None
        message.update("✓ all fields valid" + ("" if self.result else " (nothing changed yet)"))
        preview.update(self.preview(new))

    @on(Input.Changed)
    def _changed(self, event: Input.Changed) -> None:
        if self._take(event.input):
            self.check()

    def _take(self, field: Input) -> bool:
        """Note a field's text as typed; False for an input that is not one of the placement's fields."""
        if not (field.id and field.id.startswith("a-")):
            return False
        self.values[field.id[2:]] = field.value
        return True

    @on(Select.Changed, "#a-mirror")
    def _mirror(self, _event) -> None:
        self.check()

    # ---------------------------------------------------------------- finish
    async def entered(self) -> None:
        """Enter in a field: Apply, on the fields as typed."""
        for field in self.query(Input):  # as typed: their change messages may still be on the way
            self._take(field)
        self.action_apply()

    @on(Button.Pressed, "#asm-apply")
    def action_apply(self) -> None:
        self.check()
        if self.result is not None:
            self.dismiss(self.result)
        elif self.problem is None:
            self.dismiss(None)  # valid but unchanged
        else:
            self.app.bell()

    @on(Button.Pressed, "#asm-remove")
    def action_remove(self) -> None:
        ident = str(self.original.get("id"))
        new = placement_removed(self.ledger, ident)
        self.dismiss(PlacementResult(new, ident, f"removed placement {ident} ({self.original.get('file')})",
                                     dict(self.original), None))

    @on(Button.Pressed, "#asm-cancel")
    def action_cancel(self) -> None:
        self.dismiss(None)
