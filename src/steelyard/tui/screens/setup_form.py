"""One set-up form: a loadout, envelope, limit, allocation, [mac], [fuel] or [growth].

The fields are the file's own keys; on every keystroke the form builds the
table as the file would hold it (tui.state.setup_fields), runs it through the
reader's checks (tui.state.setup_tables.with_entry) and shows either the
first problem, naming the field, or what the entry does (totals, margins,
the checks it takes part in; an envelope's outline on the editor's envelope
chart). Apply works only with a valid table and dismisses with a
`SetupDone`; the App applies it through the session like any edit (undo,
change log, journal). Escape changes nothing.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from rich.text import Text
from textual import on
from textual.binding import Binding
from textual.containers import Grid, Horizontal, Vertical, VerticalScroll
from textual.screen import ModalScreen
from steelyard.tui.widgets.ordered_input import OrderedInput
from textual.widgets import Button, Input, Label, Static, TextArea

from steelyard.core.display import pretty_unit
from steelyard.core.document.model import Ledger
from steelyard.core.errors import SteelyardError
from steelyard.tui.state.setup_fields import (FIELDS, TITLES, Field, RowsError, categories_text, hint, parse,
                                              parse_categories, parse_points, points_text, shown)
from steelyard.tui.state.setup_tables import NAME_KEY, SINGLE, entries, entry_name, with_entry
from steelyard.tui.screens.answered_in_order import KEYS, InOrder, typed_so_far
from steelyard.tui.text import clean, literal
from steelyard.tui.widgets.chart import EnvelopeChart


#: items from which a form checks once typing pauses instead of on every keystroke
BIG_LEDGER = 5_000


@dataclass(frozen=True)
class SetupDone:
    ledger: Ledger
    kind: str
    name: str
    summary: str


def _set_fields(ledger: Ledger) -> tuple[Field, ...]:
    """A loadout's amounts: one field per variable item, keyed `set.<id>` as the reader names them."""
    return tuple(Field(f"set.{it.id}", "value", f"amount of {it.label}: 0.75, 75 %, 82 kg or 16 gal")
                 for it, v in zip(ledger.items, ledger.arrays.variable) if v)


def _fid(key: str) -> str:
    return "sf-" + "".join(c if c.isalnum() else f"_{ord(c):x}_" for c in key)


class SetupForm(InOrder, ModalScreen[SetupDone | None]):
    DEFAULT_CSS = """
    SetupForm { align: center middle; }
    #setup-box { width: 100%; max-width: 110; height: 100%; border: thick $primary; background: $surface;
                 padding: 0 1; }
    #setup-body { height: 1fr; }
    #setup-fields { height: 1fr; }
    #setup-grid { grid-size: 2; grid-columns: 17 1fr; grid-rows: 1; grid-gutter: 0 1; height: auto; }
    #setup-grid Label { color: $text-muted; }
    #setup-rows { height: 1fr; min-height: 4; }
    #setup-chart { width: 1fr; min-width: 30; }
    SetupForm.narrow-chart #setup-fields { width: 46; }
    #setup-hint { height: 1; color: $text-muted; }
    #setup-message { height: auto; max-height: 2; }
    #setup-preview { height: auto; max-height: 5; border-top: solid $primary; }
    #setup-buttons { height: 1; }
    #setup-buttons Button { margin-right: 2; }
    SetupForm Input.bad, SetupForm TextArea.bad { background: $error 30%; }
    """
    # Tab moves focus in the order keys arrive (a burst or a paste over SSH lands field by field)
    BINDINGS = [*KEYS, Binding("escape", "cancel", "Cancel"), Binding("ctrl+s", "apply", "Apply", show=False),
                Binding("tab", "app.focus_next", "Next field", show=False, priority=True),
                Binding("shift+tab", "app.focus_previous", "Previous field", show=False, priority=True)]

    def __init__(self, ledger: Ledger, kind: str, at: int | None,
                 preview: Callable[[Ledger, str | None], Text]) -> None:
        super().__init__()
        self.ledger = ledger
        self.kind = kind
        self.at = at
        self.old: dict = entries(ledger, kind)[at] if at is not None else {}
        self.preview = preview
        self.fields = FIELDS[kind] + (_set_fields(ledger) if kind == "loadout" else ())
        self.rows = next((f for f in self.fields if f.kind == "rows"), None)
        self.result: Ledger | None = None
        self.raw: dict | None = None
        self._pending = None  # the timer of a check waiting for typing to pause (large ledgers)

    # ----------------------------------------------------------------- build
    def compose(self):
        verb = "New" if self.at is None else "Edit"
        what = TITLES[self.kind] + ("" if self.kind in SINGLE or self.at is None
                                    else f" {entry_name(self.kind, self.old)}")
        u = self.ledger.units
        with Vertical(id="setup-box"):
            yield Static(Text(f"{verb}: {clean(what)}", style="bold") + Text(
                f" · bare numbers in the file's units: {pretty_unit(u.mass)}, {pretty_unit(u.length)}", style="dim"),
                id="setup-title")
            with Horizontal(id="setup-body"):
                with VerticalScroll(id="setup-fields"):
                    with Grid(id="setup-grid"):
                        for f in self.fields:
                            if f.kind == "rows":
                                continue
                            yield Label(Text(f.key), classes="form-label")
                            yield OrderedInput(self._initial(f), id=_fid(f.key), compact=True,
                                        placeholder=hint(f, self.ledger)[:40])
                    if self.rows is not None:
                        yield Label(Text(f"{self.rows.key}: {hint(self.rows, self.ledger)}"), classes="form-label")
                        yield TextArea(self._initial(self.rows), id="setup-rows", soft_wrap=False,
                                       show_line_numbers=True)
                if self.kind == "envelope":
                    yield EnvelopeChart(id="setup-chart")
            yield Static("", id="setup-hint")
            yield Static("", id="setup-message")
            yield Static("", id="setup-preview")
            with Horizontal(id="setup-buttons"):
                yield Button("Apply", id="setup-apply", variant="primary", compact=True)
                yield Button("Cancel", id="setup-cancel", compact=True)

    def _initial(self, f: Field) -> str:
        if f.kind == "rows":
            if self.kind == "envelope":
                return points_text(self.old.get("points", []))
            return categories_text(self.old)
        if f.key.startswith("set."):
            return shown(f, self.old.get("set", {}).get(f.key[4:]))
        return shown(f, self.old.get(f.key))

    def on_mount(self) -> None:
        if self.kind == "envelope":
            self.add_class("narrow-chart")
        first = self.query(Input)
        (first.first() if first else self.query_one("#setup-rows")).focus()
        self.check()

    # ----------------------------------------------------------------- check
    def table(self) -> dict:
        """The table the file would hold, from what is typed (keys the form does not show are kept)."""
        if self.kind == "growth":
            return parse_categories(self.query_one("#setup-rows", TextArea).text)
        out: dict = {}
        amounts: dict = {}
        for f in self.fields:
            if f.kind == "rows":
                out[f.key] = parse_points(self.query_one("#setup-rows", TextArea).text)
                continue
            v = parse(f, self.query_one(f"#{_fid(f.key)}", Input).value)
            if f.key.startswith("set."):
                if v is not None:
                    amounts[f.key[4:]] = v
            elif v is not None:
                out[f.key] = v
            elif f.key == NAME_KEY.get(self.kind) == "group":
                out[f.key] = ""  # an allocation of the whole vehicle
        if self.kind == "loadout" and amounts:
            out["set"] = amounts
        shown_keys = {f.key for f in self.fields} | ({"set"} if self.kind == "loadout" else set())
        out.update((k, v) for k, v in self.old.items() if k not in shown_keys)  # user data, kept verbatim
        return out

    def check(self) -> None:
        for w in self.query(".bad"):
            w.remove_class("bad")
        message = self.query_one("#setup-message", Static)
        self.result = self.raw = None
        try:
            raw = self.table()
            new = with_entry(self.ledger, self.kind, self.at, raw)
        except RowsError as exc:
            self.query_one("#setup-rows").add_class("bad")
            message.update(literal(f"✗ {self.rows.key if self.rows else 'rows'}: {exc}", style="bold"))
            self._chart(None)
            return
        except SteelyardError as exc:
            self._mark(exc)
            where = f"{exc.subject}: " if exc.subject else ""
            message.update(literal(f"✗ {where}{exc.field + ': ' if exc.field else ''}{exc.message}", style="bold"))
            self._chart(self._points_or_none())
            return
        self.result, self.raw = new, raw
        changed = raw != self.old
        message.update("✓ valid" + (": Apply (or ctrl+s) to make the change" if changed or self.at is None
                                    else "; nothing changed yet"))
        name = entry_name(self.kind, raw) if self.kind not in SINGLE else None
        self.query_one("#setup-preview", Static).update(self.preview(new, name))
        self._chart(self._points_or_none())

    def _mark(self, exc: SteelyardError) -> None:
        key = exc.field or ""
        if self.rows is not None and (key == self.rows.key or self.kind == "growth"):
            self.query_one("#setup-rows").add_class("bad")
            return
        for candidate in (key, key.split(" ")[0], key.split(".")[0]):
            found = self.query(f"#{_fid(candidate)}")
            if found:
                found.first().add_class("bad")
                return

    def _points_or_none(self):
        if self.kind != "envelope":
            return None
        try:
            pts = parse_points(self.query_one("#setup-rows", TextArea).text)
            return np.asarray([[float(c), float(m)] for c, m in pts], dtype=float).reshape(-1, 2)
        except (RowsError, TypeError, ValueError):
            return None

    def _chart(self, pts) -> None:
        """The outline as typed, in the file's units (bare numbers are what the file holds)."""
        if self.kind != "envelope":
            return
        chart = self.query_one(EnvelopeChart)
        u = self.ledger.units
        axis = self.query_one(f"#{_fid('axis')}", Input).value.strip() or "?"
        if pts is None or not len(pts):
            chart.clear()
            return
        unit = "%MAC" if self.query_one(f"#{_fid('units')}", Input).value.strip().lower() == "%mac" else \
            pretty_unit(u.length)
        chart.set_data(pts, x_label=f"CG {axis} [{unit}]", y_label=f"mass [{pretty_unit(u.mass)}]")

    @on(Input.Changed)
    @on(TextArea.Changed)
    def _changed(self) -> None:
        """Check at once on a small ledger; on a large one (the reader's checks and the preview cost
        a few hundred ms at 100,000 items, tests/perf/bench_setup.py) once typing pauses. Apply
        always checks first, so a check skipped here never lets a bad table through."""
        if len(self.ledger.items) < BIG_LEDGER:
            self.check()
            return
        if self._pending is not None:
            self._pending.stop()
        self._pending = self.set_timer(0.25, self.check)

    async def entered(self) -> None:
        self.focus_next()  # in a field: on to the next one

    def on_descendant_focus(self, event) -> None:
        widget = event.widget
        wid = widget.id or ""
        for f in self.fields:
            if (f.kind == "rows" and wid == "setup-rows") or wid == _fid(f.key):
                self.query_one("#setup-hint", Static).update(Text(f"{f.key}: {hint(f, self.ledger)}"))
                return

    # ---------------------------------------------------------------- finish
    @on(Button.Pressed, "#setup-apply")
    async def action_apply(self) -> None:
        await typed_so_far(self)  # keys sent to a field before Apply are in it (check reads the fields)
        self.check()
        if self.result is None:
            self.app.bell()
            return
        if self.at is not None and self.raw == self.old:
            self.dismiss(None)
            return
        name = entry_name(self.kind, self.raw)
        self.dismiss(SetupDone(self.result, self.kind, name, summary_of(self.kind, self.old if self.at is not None
                                                                         else None, self.raw)))

    @on(Button.Pressed, "#setup-cancel")
    def action_cancel(self) -> None:
        self.dismiss(None)


def summary_of(kind: str, old: dict | None, new: dict | None) -> str:
    """One line for the change log: what was added, changed or deleted."""
    label = f"[{kind}]" if kind in SINGLE else f"{kind} {entry_name(kind, new if new is not None else old)}"
    if old is None:
        return f"added {label}"
    if new is None:
        return f"deleted {label}"
    keys = [k for k in dict.fromkeys([*old, *new]) if old.get(k) != new.get(k)]
    before = entry_name(kind, old)
    renamed = f" (was {before})" if kind not in SINGLE and before != entry_name(kind, new) else ""
    return f"{label}{renamed}: changed {', '.join(keys)}"
