"""The editor applies `check`'s scopes and shows limits; the item form loses no key and fits 80x24.

Expected figures are hand-worked fractions of the invented drone in
tests/test_scope_room_left.py. Keys are sent as a terminal sends a burst
(every key queued at once, no pause), and as a bracketed paste.
"""

from __future__ import annotations

import re

import pytest
from rich.cells import cell_len
from textual import events
from textual.widgets import Input, Label, Select

from steelyard.tui.screens import item_form
from steelyard.tui.screens.item_form import ItemForm
from steelyard.tui.widgets.ledger_table import share_text_width
from support.ledgers import write_ledger
from support.paths import FIXTURES
from support.tui import (SIZE, burst, copy_fixture, cursor_to, editor, key_on_item, screen_text, settle, type_into,
                         wait_for_screen)
from test_scope_room_left import DRONE

def spelled(text: str) -> list[str]:
    return ["space" if ch == " " else ch for ch in text]


def flat(app) -> str:
    return " ".join(screen_text(app).split())


def _number_after(text: str, label: str) -> float:
    m = re.search(re.escape(label) + r"\s*([0-9][0-9,]*\.?[0-9]*)", text)
    assert m, f"{label!r} not in {text!r}"
    return float(m.group(1).replace(",", ""))


# ------------------------------------------------------------------ scope and limits


async def test_status_strip_scopes_envelopes_and_shows_the_mass_limit(tmp_path):
    path = write_ledger(tmp_path, DRONE)
    async with editor(path) as (app, pilot):
        app.session.set_loadout("survey")
        app.refresh_views()
        await settle(pilot, app)
        text = flat(app)
        assert "OUTSIDE" not in text  # ferry-only limits loadout ferry only; survey (11/4 kg) is above its 5/2 top
        assert "ferry-only: does not apply" in text
        assert "limit mtow ok" in text
        # room left: mtow 31/10 - 11/4 = 7/20 kg, not the envelope's 18/5 - 11/4 = 17/20 (hand-worked)
        assert abs(_number_after(text, "Room left:") - 0.35) < 5e-3
        assert 'mass limit "mtow" binds' in text


async def test_envelope_view_and_form_preview_apply_the_scope(tmp_path):
    path = write_ledger(tmp_path, DRONE)
    async with editor(path) as (app, pilot):
        app.session.set_loadout("survey")
        app.refresh_views()
        await pilot.press("3")
        await settle(pilot, app)
        text = flat(app)
        assert "ferry-only (x): does not apply to this loadout (it limits loadouts ferry only)" in text
        assert 'mass limit "mtow"' in text and "to spare" in text
        await pilot.press("1")
        await cursor_to(app, pilot, "camera")
        await pilot.press("e")
        await wait_for_screen(app, pilot, ItemForm)
        await type_into(app, pilot, "f-mass", "0.6")
        preview = " ".join(str(app.screen.query_one("#form-preview").render()).split())
        assert "ferry-only: does not apply to this loadout" in preview
        # camera 1/2 -> 3/5 kg: survey 57/20 kg; mtow room 31/10 - 57/20 = 1/4 (normal: 3/4) (hand-worked)
        assert abs(_number_after(preview, "Room left:") - 0.25) < 5e-3 and '"mtow"' in preview
        assert "mass limit mtow: margin" in preview


# ------------------------------------------------------------------ keys and paste


async def test_keys_typed_at_once_after_a_land_in_order(tmp_path):
    path = copy_fixture(tmp_path)
    async with editor(path) as (app, pilot):
        burst(app, ["a", *"fuse-01", "tab", *spelled("Fuselage shell"), "tab", *"structure"])
        await wait_for_screen(app, pilot, ItemForm)
        await settle(pilot, app)
        form = app.screen
        got = [form.query_one(f"#f-{k}", Input).value for k in ("id", "name", "group")]
        assert got == ["fuse-01", "Fuselage shell", "structure"]


async def test_keys_typed_at_once_after_enter_reach_the_mass(tmp_path):
    path = copy_fixture(tmp_path)
    async with editor(path) as (app, pilot):
        await cursor_to(app, pilot, "wing-l")
        burst(app, ["enter", "backspace", "backspace", *"88.5", "backspace", "6"])
        await wait_for_screen(app, pilot, ItemForm)
        await settle(pilot, app)
        # the form opens on the mass (99.0 lb, trainer.toml) with its text selected: the first backspace
        # clears it, the second finds nothing; a backspace queued behind "88.5" takes the "5" only
        assert app.screen.query_one("#f-mass", Input).value == "88.6"


async def test_paste_right_after_opening_lands_in_the_id(tmp_path):
    path = copy_fixture(tmp_path)
    async with editor(path) as (app, pilot):
        burst(app, ["a"])
        app.post_message(events.Paste("nav-light-2"))
        burst(app, ["tab", *spelled("Nav light")])
        await wait_for_screen(app, pilot, ItemForm)
        await settle(pilot, app)
        form = app.screen
        assert form.query_one("#f-id", Input).value == "nav-light-2"
        assert form.query_one("#f-name", Input).value == "Nav light"


async def test_the_valid_line_follows_every_key(tmp_path):
    path = copy_fixture(tmp_path)
    async with editor(path) as (app, pilot):
        await key_on_item(app, pilot, "wing-l", "e", ItemForm)
        form = app.screen
        form.query_one("#f-mass", Input).value = ""
        form.query_one("#f-mass", Input).focus()
        await pilot.pause()
        # "l" is the litre, a volume; "lb" a mass; "lbx" no unit (NIST SP 811 unit symbols)
        for key, ok in (("2", True), ("space", True), ("l", False), ("b", True), ("x", False), ("backspace", True)):
            await pilot.press(key)
            line = str(form.query_one("#form-message").render())
            assert line.startswith("✓" if ok else "✗"), (key, line)


async def test_a_big_ledger_checks_the_edit_in_a_thread(tmp_path, monkeypatch):
    monkeypatch.setattr(item_form, "SYNC_ITEMS", 0)  # the path a 100,000-item ledger takes
    path = write_ledger(tmp_path, DRONE)
    async with editor(path) as (app, pilot):
        app.session.set_loadout("survey")
        app.refresh_views()
        await cursor_to(app, pilot, "camera")
        await pilot.press("e")
        await wait_for_screen(app, pilot, ItemForm)
        await type_into(app, pilot, "f-mass", "0.6")
        await settle(pilot, app)
        form = app.screen
        assert str(form.query_one("#form-message").render()) == "✓ all fields valid"
        assert abs(_number_after(str(form.query_one("#form-preview").render()), "Room left:") - 0.25) < 5e-3
        await pilot.press("enter")
        await settle(pilot, app)
        assert app.session.ledger.item("camera").mass == pytest.approx(0.6)


# ------------------------------------------------------------------ layout


def _inside(region, width: int, height: int) -> bool:
    return region.width > 0 and region.height > 0 and region.x >= 0 and region.y >= 0 and \
        region.right <= width and region.bottom <= height


@pytest.mark.parametrize("kind", ["point mass", "inertia typed in", "tube", "box"])
async def test_every_form_control_is_on_screen_at_80x24(tmp_path, kind):
    path = copy_fixture(tmp_path)
    async with editor(path, size=SIZE) as (app, pilot):
        await pilot.press("a")
        await wait_for_screen(app, pilot, ItemForm)
        form = app.screen
        form.query_one("#f-kind", Select).value = kind
        await settle(pilot, app)
        controls = [w for w in form.query("Input, Select, Button") if w.display]
        assert len(controls) >= 15  # 10 fields, 3 lists, 2 buttons, and the shape's fields
        for w in controls:
            assert _inside(w.region, *SIZE), (w.id, w.region)
        for label in form.query(Label):
            if label.display:
                text = str(label.render())
                assert cell_len(text) <= label.region.width, (text, label.region)  # no label cut
        variable = form.query_one("#f-variable", Select)
        assert cell_len("yes: loadouts set its amount") + 2 <= variable.region.width


async def test_the_shape_list_opens_inside_the_screen(tmp_path):
    path = copy_fixture(tmp_path)
    async with editor(path, size=SIZE) as (app, pilot):
        await pilot.press("a")
        await wait_for_screen(app, pilot, ItemForm)
        app.screen.query_one("#f-kind", Select).focus()
        await pilot.press("enter")
        await settle(pilot, app)
        overlay = app.screen.query_one("SelectOverlay")
        assert overlay.display and _inside(overlay.region, *SIZE), overlay.region


async def test_an_error_names_the_label_shown(tmp_path):
    path = copy_fixture(tmp_path)
    async with editor(path) as (app, pilot):
        await pilot.press("a")
        await wait_for_screen(app, pilot, ItemForm)
        form = app.screen
        form.query_one("#f-kind", Select).value = "tube"
        await settle(pilot, app)
        for key, value in (("id", "t1"), ("mass", "2"), ("x", "1"), ("y", "0"), ("z", "0"),
                           ("dim-outer_radius", "abc")):
            await type_into(app, pilot, f"f-{key}", value)
        line = str(form.query_one("#form-message").render())
        assert line.startswith("✗ outer radius [in]:"), line  # trainer.toml lengths are in inches
        assert "dim." not in flat(app)


def test_text_columns_take_their_width_before_the_name():
    # room 60: id 20 and group 20 in full, the name takes the 20 left (hand-worked)
    assert share_text_width(60, 20, 50, 20, True) == (20, 20, 20)
    # room 30: the name keeps its minimum 10; id and group give back, the wider first, to 10 each
    assert share_text_width(30, 20, 50, 12, True) == (10, 10, 10)
    # no group column: the id keeps its 17 and the name has the other 40
    assert share_text_width(57, 17, 60, 30, False) == (17, 0, 40)


async def test_ids_and_groups_are_whole_at_120_columns(tmp_path):
    path = copy_fixture(tmp_path, FIXTURES / "cargo-drone.toml")
    async with editor(path, size=(120, 40)) as (app, pilot):
        await pilot.press("g")  # a flat list: id, name and group columns
        await settle(pilot, app)
        lines = screen_text(app).splitlines()
        items = app.session.ledger.items
        shown = [it for it in items if any(line.startswith(it.id + " ") for line in lines)]
        assert len(shown) >= 15
        for it in shown:
            line = next(line for line in lines if line.startswith(it.id + " "))
            assert f" {it.group} " in line and "…" not in line.split(it.name[:8])[0], line
