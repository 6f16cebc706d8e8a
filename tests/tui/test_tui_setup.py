"""The set-up list and forms: each table typed in the editor, saved, and read back by the strict reader.

The intended tables are written out here by hand, as docs/format.md and
docs/limits.md describe them; the saved file is read with the standard
library's `tomllib` and with the strict reader (`open_ledger`), so a form
that wrote anything else (or anything a file may not hold) fails. Expected
masses come from exact fractions of the file's own numbers (support.exact,
NIST SP 811 pound), never from the program.
"""

from __future__ import annotations

import pytest

import tomllib
from fractions import Fraction

import numpy as np

from steelyard.io.ledger.file import open_ledger
from steelyard.tui.screens.setup_form import SetupForm
from steelyard.tui.screens.setup_screen import SetupScreen
from steelyard.tui.screens.setup_units import UnitsForm
from support.exact import carried
from support.tui import answer_reason, copy_fixture, editor, screen_text, settle, type_into, wait_for_screen
from support.units import LB


async def open_entry(app, pilot, option_id: str) -> None:
    """T, then Down to the option (a user's keys), Enter: the entry's form."""
    if not isinstance(app.screen, SetupScreen):
        await pilot.press("T")
        await wait_for_screen(app, pilot, SetupScreen, what="T opens the set-up list")
    ol = app.screen.query_one("OptionList")
    ids = [ol.get_option_at_index(i).id for i in range(ol.option_count)]
    assert option_id in ids, ids
    await pilot.press("home")
    for _ in range(len(ids)):
        if ol.highlighted_option.id == option_id:
            break
        await pilot.press("down")
    assert ol.highlighted_option.id == option_id
    await pilot.press("enter")
    await wait_for_screen(app, pilot, SetupForm, what="Enter opens the form")


async def fill(app, pilot, values: dict[str, str]) -> None:
    from steelyard.tui.screens.setup_form import _fid

    for key, text in values.items():
        if key == "rows":
            area = app.screen.query_one("#setup-rows")
            area.focus()
            area.text = ""
            await pilot.pause()
            await pilot.press(*["enter" if ch == "\n" else "space" if ch == " " else ch for ch in text])
        else:
            await type_into(app, pilot, _fid(key), text)
    await pilot.pause(0.1)


async def apply_and_save(app, pilot, path) -> dict:
    await pilot.press("ctrl+s")  # Apply in the form
    await settle(pilot, app)
    assert not isinstance(app.screen, SetupForm), screen_text(app)
    await pilot.press("escape")  # back from the set-up list
    await settle(pilot, app)
    await pilot.press("ctrl+s")  # save the ledger
    await answer_reason(app, pilot)
    await settle(pilot, app)
    assert not app.session.dirty
    open_ledger(path)  # the strict reader takes what the form made
    return tomllib.loads(path.read_text())


def solo_mass_lb() -> Fraction:
    """The trainer's solo-training loadout in lb, exact (its own numbers; NIST SP 811 pound)."""
    from support.paths import TRAINER

    data = tomllib.loads(TRAINER.read_text())
    return sum(m for _, m in carried(data, "solo-training", {"lb": Fraction(1), "kg": 1 / LB}))


async def test_new_limit_typed_previewed_saved_and_read_back(tmp_path):
    path = copy_fixture(tmp_path)
    solo = solo_mass_lb()
    assert 1450 < solo < 1500  # the two bounds below sit either side of it
    async with editor(path) as (app, pilot):
        await open_entry(app, pilot, "limit:new")
        await fill(app, pilot, {"name": "solo-mass", "loadouts": "solo-training", "max_mass": "1450"})
        preview = app.screen.query_one("#setup-preview").render().plain
        assert "solo-training" in preview and "BROKEN" in preview  # 1450 lb is below the exact solo mass
        await fill(app, pilot, {"max_mass": "1500"})
        preview = app.screen.query_one("#setup-preview").render().plain
        assert "within" in preview and "BROKEN" not in preview
        data = await apply_and_save(app, pilot, path)
        log = app.session.log
    # the table as docs/limits.md writes it: name, scope, max_mass in the file's unit (lb)
    assert data["limit"][-1] == {"name": "solo-mass", "loadouts": ["solo-training"], "max_mass": 1500}
    assert log[-1].action == "setup" and "solo-mass" in log[-1].summary


async def test_new_envelope_with_points_table_and_chart(tmp_path):
    path = copy_fixture(tmp_path)
    async with editor(path) as (app, pilot):
        await open_entry(app, pilot, "envelope:new")
        await fill(app, pilot, {"name": "aft-check", "axis": "x",
                                "rows": "120, 1100\n120, 1800\n135, 1800\n135, 1100"})
        chart = app.screen.query_one("#setup-chart")
        assert chart.has_data and chart.picture_text().strip()
        assert "✓" in app.screen.query_one("#setup-message").render().plain
        data = await apply_and_save(app, pilot, path)
    assert data["envelope"][-1] == {"name": "aft-check", "axis": "x",
                                    "points": [[120, 1100], [120, 1800], [135, 1800], [135, 1100]]}


async def test_new_loadout_with_amounts(tmp_path):
    path = copy_fixture(tmp_path)
    async with editor(path) as (app, pilot):
        await open_entry(app, pilot, "loadout:new")
        await fill(app, pilot, {"name": "ferry", "condition": "takeoff", "set.pilot": "170 lb", "set.fuel-l": "1",
                                "set.fuel-r": "0.75"})
        data = await apply_and_save(app, pilot, path)
        log = app.session.log
    assert data["loadout"][-1] == {"name": "ferry", "condition": "takeoff",
                                   "set": {"pilot": "170 lb", "fuel-l": 1, "fuel-r": 0.75}}
    assert log[-1].action == "loadout" and log[-1].item == "ferry"


async def test_new_allocation_and_growth_table(tmp_path):
    path = copy_fixture(tmp_path)
    async with editor(path) as (app, pilot):
        await open_entry(app, pilot, "allocation:new")
        await fill(app, pilot, {"group": "avionics", "mass": "60 lb"})
        await pilot.press("ctrl+s")
        await settle(pilot, app)
        await open_entry(app, pilot, "growth:new")
        await fill(app, pilot, {"rows": 'layout = 0.2\nmock-up = "12 %"'})
        data = await apply_and_save(app, pilot, path)
    assert data["allocation"] == [{"group": "avionics", "mass": "60 lb"}]
    assert data["growth"] == {"layout": 0.2, "mock-up": "12 %"}


async def test_edit_mac_and_fuel(tmp_path):
    path = copy_fixture(tmp_path)
    async with editor(path) as (app, pilot):
        await open_entry(app, pilot, "mac:0")
        await fill(app, pilot, {"length": "61.5"})
        assert "%MAC" in app.screen.query_one("#setup-preview").render().plain
        await pilot.press("ctrl+s")
        await settle(pilot, app)
        await open_entry(app, pilot, "fuel:0")
        await fill(app, pilot, {"groups": "", "items": "fuel-l, fuel-r"})
        data = await apply_and_save(app, pilot, path)
    assert data["mac"] == {"lemac": 114.0, "length": 61.5}
    assert data["fuel"] == {"items": ["fuel-l", "fuel-r"]}


async def test_invalid_entries_name_the_field_and_nothing_is_saved(tmp_path):
    path = copy_fixture(tmp_path)
    before = path.read_bytes()
    async with editor(path) as (app, pilot):
        await open_entry(app, pilot, "limit:new")
        await fill(app, pilot, {"name": "bad", "max_mass": "heavy"})
        message = app.screen.query_one("#setup-message").render().plain
        assert "max_mass" in message and "✗" in message
        await pilot.press("ctrl+s")  # Apply refuses
        await pilot.pause(0.1)
        assert isinstance(app.screen, SetupForm)
        await fill(app, pilot, {"max_mass": "1500", "loadouts": "no-such-loadout"})
        message = app.screen.query_one("#setup-message").render().plain
        assert "loadouts" in message and "no-such-loadout" in message
        await pilot.press("escape")
        await pilot.pause(0.1)
        await open_entry(app, pilot, "envelope:new")
        await fill(app, pilot, {"name": "twisted", "axis": "x", "rows": "120, 1100\n135, 1800\n120, 1800\n135, 1100"})
        message = app.screen.query_one("#setup-message").render().plain
        assert "points" in message and "✗" in message  # a self-crossing outline, refused as a file's would be
        await pilot.press("escape")
        await pilot.press("escape")
        await settle(pilot, app)
        assert not app.session.dirty
    assert path.read_bytes() == before


async def test_delete_refused_while_named_copy_and_undo(tmp_path):
    path = copy_fixture(tmp_path)
    async with editor(path) as (app, pilot):
        await pilot.press("T")
        await wait_for_screen(app, pilot, SetupScreen)
        ol = app.screen.query_one("OptionList")
        ids = [ol.get_option_at_index(i).id for i in range(ol.option_count)]
        ol.highlighted = ids.index("loadout:0")  # solo-training: the utility envelope names it
        await pilot.press("x")
        await pilot.pause(0.2)
        await pilot.press("enter")  # "Delete" in the question
        await settle(pilot, app)
        assert [lo.name for lo in app.session.ledger.loadouts][0] == "solo-training"
        assert not app.session.dirty
        assert isinstance(app.screen, SetupScreen)
        await pilot.press("c")  # copy
        await settle(pilot, app)
        names = [lo.name for lo in app.session.ledger.loadouts]
        assert names[:2] == ["solo-training", "solo-training-copy"]
        assert app.session.ledger.loadout("solo-training-copy").set == app.session.ledger.loadout("solo-training").set
        await pilot.press("escape")
        await pilot.press("u")
        await settle(pilot, app)
        assert "solo-training-copy" not in [lo.name for lo in app.session.ledger.loadouts]
        assert not app.session.dirty


def right_handed(x: str, y: str, z: str) -> bool:
    """x × y = z for the direction words (a right-handed set, ISO 80000-2 2-17.x; common practice)."""
    v = {"fwd": (1, 0, 0), "aft": (-1, 0, 0), "left": (0, 1, 0), "right": (0, -1, 0), "up": (0, 0, 1),
         "down": (0, 0, -1)}
    return bool(np.array_equal(np.cross(v[x], v[y]), v[z]))


async def test_new_ledger_dialog_units_and_frame(tmp_path):
    path = tmp_path / "drone.toml"
    assert right_handed("fwd", "left", "up") and not right_handed("fwd", "right", "up")
    async with editor(path) as (app, pilot):
        await wait_for_screen(app, pilot, UnitsForm, what="a new file asks for units and frame")
        form = app.screen
        form.query_one("#units-mass").value = "g"
        form.query_one("#units-length").value = "mm"
        form.query_one("#frame-x").value = "fwd"
        form.query_one("#frame-y").value = "right"
        form.query_one("#frame-z").value = "up"
        await pilot.pause(0.1)
        message = form.query_one("#units-message").render().plain
        assert "left-handed" in message and "frame" in message
        assert form.query_one("#units-inertia").value == "g*mm**2"  # follows mass and length
        form.query_one("#frame-y").value = "left"
        await pilot.pause(0.1)
        assert "✓" in form.query_one("#units-message").render().plain
        await pilot.press("ctrl+s")  # Apply
        await settle(pilot, app)
        assert not isinstance(app.screen, UnitsForm)
        await pilot.press("ctrl+s")  # save: the first save writes the file
        await answer_reason(app, pilot)
        await settle(pilot, app)
    data = tomllib.loads(path.read_text())
    assert data["units"] == {"mass": "g", "length": "mm", "inertia": "g*mm**2"}
    assert data["frame"] == {"x": "fwd", "y": "left", "z": "up"}
    assert open_ledger(path).ledger.units.mass == "g"


async def test_large_ledger_checks_on_pause_and_apply_still_refuses(tmp_path, monkeypatch):
    import steelyard.tui.screens.setup_form as setup_form

    monkeypatch.setattr(setup_form, "BIG_LEDGER", 0)  # every ledger counts as large: checks wait for a pause
    path = copy_fixture(tmp_path)
    before = path.read_bytes()
    async with editor(path) as (app, pilot):
        await open_entry(app, pilot, "limit:new")
        await pilot.press(*"mtow", "tab", "tab", "tab", "tab", *"heavy", "ctrl+s")  # no pause before Apply
        await pilot.pause(0.1)
        assert isinstance(app.screen, SetupForm)
        assert "max_mass" in app.screen.query_one("#setup-message").render().plain
        await pilot.press("escape", "escape")
        await settle(pilot, app)
        assert not app.session.dirty
    assert path.read_bytes() == before


async def test_keys_typed_as_the_form_opens_land_in_its_first_field(tmp_path):
    path = copy_fixture(tmp_path)
    async with editor(path) as (app, pilot):
        await pilot.press("T")
        await wait_for_screen(app, pilot, SetupScreen)
        ol = app.screen.query_one("OptionList")
        ids = [ol.get_option_at_index(i).id for i in range(ol.option_count)]
        ol.highlighted = ids.index("allocation:new")
        await pilot.press("enter", *"avionics", "tab", *"60", "ctrl+s")  # no pause after Enter
        await settle(pilot, app)
        assert app.session.ledger.allocations == ({"group": "avionics", "mass": 60},)


@pytest.mark.parametrize("step", ["tab", "enter"])
async def test_a_burst_of_keys_in_a_set_up_form_lands_field_by_field(tmp_path, step):
    # keys posted all at once, as a fast typist or an unbracketed paste over SSH delivers them: each Tab,
    # or Enter (which moves on as Tab does: the form's hint line), must move focus between the characters,
    # not after them (common practice: type-ahead is kept in order)
    from textual import events

    path = copy_fixture(tmp_path)
    async with editor(path) as (app, pilot):
        await open_entry(app, pilot, "limit:new")
        chars = {"tab": "\t", "enter": "\r", "space": " "}
        for key in [*"mtow", step, step, step, step, *"7.2", "space", *"kg"]:
            app.post_message(events.Key(key, chars.get(key, key)))
        await settle(pilot, app)
        from steelyard.tui.screens.setup_form import _fid

        assert app.screen.query_one(f"#{_fid('name')}").value == "mtow"
        assert app.screen.query_one(f"#{_fid('max_mass')}").value == "7.2 kg"
        await pilot.press("escape")
