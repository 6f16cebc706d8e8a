"""A save asks why: the reason and change request go into the file's [[change]] tables and the log view.

The file is read back with the standard library's tomllib (TOML 1.0), not
with steelyard; the mass typed is checked with exact fractions.
"""

from __future__ import annotations

import tomllib
from fractions import Fraction

from steelyard.tui.screens.reason_prompt import ReasonPrompt
from support.tui import answer_reason, copy_fixture, cursor_to, editor, screen_text, settle, type_into, wait_for_screen


async def test_edit_save_with_a_reason_puts_it_in_the_file_and_the_log_view(tmp_path):
    path = copy_fixture(tmp_path)
    async with editor(path, size=(120, 40)) as (app, pilot):
        await cursor_to(app, pilot, "wing-l")
        await pilot.press("e")
        await pilot.pause()
        await type_into(app, pilot, "f-mass", "150")
        await pilot.press("enter")
        await settle(pilot, app)
        await pilot.press("ctrl+s")
        await answer_reason(app, pilot, "repair doubler added", "CR-0107")
        await settle(pilot, app)
        assert not app.session.dirty
        await pilot.press("4")  # the change log view
        await pilot.pause()
        shown = screen_text(app)
        assert "why: repair doubler added (request CR-0107)" in shown
        # a second edit asks again; the first change keeps its own reason
        await cursor_to(app, pilot, "wing-l")
        await pilot.press("e")
        await pilot.pause()
        await type_into(app, pilot, "f-mass", "151")
        await pilot.press("enter")
        await settle(pilot, app)
        await pilot.press("ctrl+s")
        await wait_for_screen(app, pilot, ReasonPrompt)
        await pilot.press("enter")  # skipped
        await settle(pilot, app)
        assert not app.session.dirty
    data = tomllib.loads(path.read_text())
    first, second = data["change"][-2:]
    assert first["reason"] == "repair doubler added" and first["request"] == "CR-0107"
    assert "reason" not in second and "request" not in second
    # the after-value in the log is the typed mass in the file's unit, in SI (lb: NIST SP 811 exact)
    unit = data["units"]["mass"]
    factor = {"kg": Fraction(1), "lb": Fraction("0.45359237")}[unit]
    want = Fraction(151) * factor
    assert abs(Fraction(second["after"]["mass_kg"]) - want) <= want * Fraction(5, 10**6)  # 6 significant figures


async def test_escape_at_the_reason_cancels_the_save(tmp_path):
    path = copy_fixture(tmp_path)
    on_disk = path.read_bytes()
    async with editor(path) as (app, pilot):
        await cursor_to(app, pilot, "wing-l")
        await pilot.press("d")  # duplicate
        await settle(pilot, app)
        await pilot.press("ctrl+s")
        await wait_for_screen(app, pilot, ReasonPrompt)
        await pilot.press("escape")
        await settle(pilot, app)
        assert app.session.dirty and path.read_bytes() == on_disk
        assert "Save: reason" not in screen_text(app)
