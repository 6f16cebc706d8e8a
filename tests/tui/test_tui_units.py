"""The unit chooser (T): mass, length and inertia units picked per quantity, saved per user."""

from __future__ import annotations

from steelyard.io.user_settings import load_choice
from steelyard.tui.screens.units_screen import UnitsScreen
from support.exact import exact_totals
from support.sigfig import sig_text
from support.tui import copy_fixture, editor, screen_text, settle, wait_for_screen
from support.units import LB


async def test_choose_grams_and_ounces_headless(tmp_path, monkeypatch):
    settings = tmp_path / "cfg" / "settings.toml"
    monkeypatch.setenv("STEELYARD_SETTINGS", str(settings))
    path = copy_fixture(tmp_path)
    data = path.read_bytes()
    async with editor(path) as (app, pilot):
        mass, _ = exact_totals(path)  # kg, exact (the file is in lb: NIST SP 811 pound)
        await pilot.press("2")  # totals view
        await pilot.press("D")
        await wait_for_screen(app, pilot, UnitsScreen, what="the unit chooser")
        # rows: system, mass, length, inertia; mass options: as the system, auto, kg, g, lb, oz
        await pilot.press("down", "right", "right", "right", "enter")
        await settle(pilot, app)
        assert not isinstance(app.screen, UnitsScreen)
        assert app.session.system.mass == "g"
        # 5 significant figures of the exact total in grams (1 g = 1/1000 kg, SI)
        assert f"Mass {sig_text(mass * 1000)} g" in screen_text(app)
        assert load_choice().mass == "g"  # saved for the person, not in the file
        await pilot.press("D")
        await wait_for_screen(app, pilot, UnitsScreen)
        await pilot.press("down", "right", "right", "right", "escape")  # cancelled: nothing changes
        await settle(pilot, app)
        assert app.session.system.mass == "g"
        await pilot.press("D")
        await wait_for_screen(app, pilot, UnitsScreen)
        await pilot.press("down", "left", "enter")  # g -> kg
        await settle(pilot, app)
        assert app.session.system.mass == "kg"
        await pilot.press("D")
        await wait_for_screen(app, pilot, UnitsScreen)
        await pilot.press("down", "right", "right", "right", "enter")  # kg -> g -> lb -> oz
        await settle(pilot, app)
        # 1 oz = LB / 16 exactly (NIST SP 811)
        assert f"Mass {sig_text(mass / (LB / 16))} oz" in screen_text(app)
    assert path.read_bytes() == data  # display units never touch the ledger
