"""Keys typed right behind the Enter or Escape that closes a question reach the screen beneath.

Keys are queued on the App all at once, as a fast typist or a paste over SSH
sends them (see test_tui_scope_and_input.burst). The answer must be exactly
what was typed before the Enter; the key after it must act on the ledger
screen (here `4`, the change-log view). Saved files are read back with the
standard library's tomllib, not with steelyard.
"""

from __future__ import annotations

import tomllib
from fractions import Fraction


from steelyard.tui.screens.item_form import ItemForm
from steelyard.tui.screens.prompt import TextPrompt
from steelyard.tui.screens.reason_prompt import ReasonPrompt
from support.tui import (at_the_reason, burst, copy_fixture, current_view, cursor_to, editor, key_on_item, settle,
                         unsaved_change, wait_for_screen)


LB = Fraction("0.45359237")  # kg in one pound, exact by definition (NIST SP 811)


async def test_a_key_typed_after_the_reasons_enter_goes_to_the_table_not_the_reason(tmp_path):
    path = copy_fixture(tmp_path)
    async with editor(path) as (app, pilot):
        await at_the_reason(app, pilot)
        burst(app, [*"doubler", "enter", "4"])
        await settle(pilot, app)
        assert not isinstance(app.screen, ReasonPrompt)
        assert not app.session.dirty  # saved
        assert current_view(app) == "log"  # the 4 typed after the Enter switched the view
    data = tomllib.loads(path.read_text())
    assert data["change"][-1]["reason"] == "doubler"  # not "doubler4", not cut short


async def test_a_key_typed_after_escape_at_the_reason_goes_to_the_table(tmp_path):
    path = copy_fixture(tmp_path)
    on_disk = path.read_bytes()
    async with editor(path) as (app, pilot):
        await at_the_reason(app, pilot)
        burst(app, [*"abc", "escape", "4"])
        await settle(pilot, app)
        assert not isinstance(app.screen, ReasonPrompt)
        assert app.session.dirty and path.read_bytes() == on_disk  # Escape: no save
        assert current_view(app) == "log"


async def test_the_group_prompt_takes_what_came_before_its_enter_only(tmp_path):
    path = copy_fixture(tmp_path)
    async with editor(path) as (app, pilot):
        await key_on_item(app, pilot, "wing-l", "m", TextPrompt)
        # the prompt opens on the item's group, "structure/wing" (fixtures/trainer.toml), selected: End keeps it
        burst(app, ["end", *"/spar", "enter", "4"])
        await settle(pilot, app)
        assert not isinstance(app.screen, TextPrompt)
        assert app.session.ledger.item("wing-l").group == "structure/wing/spar"
        assert current_view(app) == "log"


async def test_the_item_form_applies_what_came_before_its_enter_and_the_next_key_reaches_the_table(tmp_path):
    path = copy_fixture(tmp_path)
    async with editor(path) as (app, pilot):
        await cursor_to(app, pilot, "wing-l")
        # Enter opens the form on the mass (99.0 lb, trainer.toml) with its text selected; 4 is the log view
        burst(app, ["enter", "backspace", *"88.5", "enter", "4"])
        await settle(pilot, app)
        assert not isinstance(app.screen, ItemForm)
        got = app.session.ledger.item("wing-l").mass  # kg
        assert abs(Fraction(got) - Fraction("88.5") * LB) < Fraction(1, 10**9)  # 88.5 lb, not 88.54 lb
        # the change log says each number with its unit (trainer.toml: lb, mass = 99.0)
        assert app.session.log[-1].summary == "edited wing-l: mass 99.0 lb → 88.5 lb"
        assert current_view(app) == "log"


async def test_keys_typed_right_after_ctrl_s_answer_the_reason_question(tmp_path):
    # the question is on screen before the next key is read: "w" is the first letter of the reason,
    # not the weighing form's key
    path = copy_fixture(tmp_path)
    async with editor(path) as (app, pilot):
        await unsaved_change(app, pilot)
        burst(app, ["ctrl+s", *"wheel fairing", "enter", "4"])
        await settle(pilot, app)
        assert not app.session.dirty
        assert current_view(app) == "log"
    data = tomllib.loads(path.read_text())
    assert data["change"][-1]["reason"] == "wheel fairing"


async def test_keys_typed_right_after_save_as_name_the_file(tmp_path):
    path = copy_fixture(tmp_path)
    target = tmp_path / "copy.toml"
    async with editor(path) as (app, pilot):
        await unsaved_change(app, pilot)
        burst(app, ["W", *str(target), "enter"])
        await wait_for_screen(app, pilot, ReasonPrompt)  # the next question, asked once the name is known
        await pilot.press("enter")
        await settle(pilot, app)
        assert not app.session.dirty
    assert [t["id"] for t in tomllib.loads(target.read_text())["item"]].count("wing-l") == 1
    assert len(tomllib.loads(target.read_text())["item"]) == len(tomllib.loads(path.read_text())["item"]) + 1


async def test_keys_typed_right_after_ctrl_o_name_the_file_to_open(tmp_path):
    path = copy_fixture(tmp_path)
    other = copy_fixture(tmp_path, name="other.toml")
    async with editor(path) as (app, pilot):
        burst(app, ["ctrl+o", *str(other), "enter"])  # letters of a path are also ledger-screen keys
        for _ in range(100):  # the other file loads in a worker
            await pilot.pause(0.05)
            if app.session is not None and app.session.path == str(other):
                break
        assert app.session.path == str(other)
        assert app.session.ledger.item("wing-l") is not None and not app.session.dirty


async def test_keys_typed_right_after_ctrl_q_answer_the_unsaved_work_question(tmp_path):
    path = copy_fixture(tmp_path)
    on_disk = path.read_bytes()
    async with editor(path) as (app, pilot):
        await unsaved_change(app, pilot)
        burst(app, ["ctrl+q", "tab", "enter"])  # Save, Discard, Cancel: Tab to Discard, Enter
        for _ in range(100):
            await pilot.pause(0.05)
            if app.return_code is not None:
                break
        assert app.return_code == 0
    assert path.read_bytes() == on_disk  # discarded: the file as it was
