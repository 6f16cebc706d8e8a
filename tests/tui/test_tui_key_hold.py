"""Keys typed while a flow goes from one question to the next answer the next question.

The flows ask their later questions from a worker (steelyard.tui.key_hold):
keys typed between an answer and the next question must wait for it, not
run as commands on the ledger screen ("w" opens the weighing form, "4" the
change log). Keys are queued on the App all at once, as a fast typist or a
paste over SSH sends them. Saved files are read back with the standard
library's tomllib, not with steelyard.
"""

from __future__ import annotations

import asyncio
import tomllib

from steelyard.tui import key_hold
from steelyard.tui.screens.confirm import ConfirmScreen
from steelyard.tui.screens.reason_prompt import ReasonPrompt
from support.tui import burst, copy_fixture, current_view, editor, settle, unsaved_change, wait_for_screen


async def _until_exit(app, pilot) -> None:
    for _ in range(200):
        await pilot.pause(0.05)
        if app.return_code is not None:
            return


def _last_reason(path) -> str:
    return tomllib.loads(path.read_text())["change"][-1]["reason"]


async def test_the_reason_typed_right_after_the_save_as_name_answers_the_reason_question(tmp_path):
    path = copy_fixture(tmp_path)
    target = tmp_path / "copy.toml"
    async with editor(path) as (app, pilot):
        await unsaved_change(app, pilot)
        # name, Enter, then the reason (asked from the save's worker), Enter, then 4 (the log view)
        burst(app, ["W", *str(target), "enter", *"wheel", "enter", "4"])
        await settle(pilot, app)
        assert not app.session.dirty and app.session.path == str(target)
        assert current_view(app) == "log"  # the key after the last Enter still reached the ledger screen
        assert getattr(app, "keys_held", 0) == 0
    assert _last_reason(target) == "wheel"  # every letter, none taken as a command


async def test_keys_typed_ahead_never_answer_replace_it(tmp_path):
    # "Replace it?" may come unexpected: an Enter typed ahead for the reason must not overwrite a file
    path = copy_fixture(tmp_path)
    other = copy_fixture(tmp_path, name="other.toml")
    on_disk = other.read_bytes()
    async with editor(path) as (app, pilot):
        await unsaved_change(app, pilot)
        burst(app, ["W", *str(other), "enter", "enter", *"why", "enter"])
        await wait_for_screen(app, pilot, ConfirmScreen, what="Replace it? is asked")
        await pilot.pause(0.3)
        assert isinstance(app.screen, ConfirmScreen)  # still asked: the keys typed ahead were dropped
        assert other.read_bytes() == on_disk and app.session.dirty and app.keys_held == 0
        await pilot.press("enter")  # Replace, now that it is on screen
        await wait_for_screen(app, pilot, ReasonPrompt)
        burst(app, [*"why", "enter"])
        await settle(pilot, app)
        assert not app.session.dirty and app.session.path == str(other)
    assert _last_reason(other) == "why"
    ids = [t["id"] for t in tomllib.loads(other.read_text())["item"]]
    assert len(ids) == len(tomllib.loads(path.read_text())["item"]) + 1  # the duplicate, saved there


async def test_keys_after_a_cancelled_question_act_on_the_ledger_screen(tmp_path):
    path = copy_fixture(tmp_path)
    target = tmp_path / "copy.toml"
    async with editor(path) as (app, pilot):
        await unsaved_change(app, pilot)
        burst(app, ["W", *str(target), "enter", "escape", "4"])  # the reason: Escape, and the save ends there
        await settle(pilot, app)
        assert app.session.dirty and app.session.path == str(path)
        assert current_view(app) == "log"  # the 4 was handed on when the flow ended, not lost
        assert getattr(app, "keys_held", 0) == 0
    assert not target.exists()


async def test_quit_save_then_the_reason_in_one_burst(tmp_path):
    path = copy_fixture(tmp_path)
    async with editor(path) as (app, pilot):
        await unsaved_change(app, pilot)
        # Save (focused) on the unsaved-work question; the reason comes from the quit's worker
        burst(app, ["ctrl+q", "enter", *"why", "enter"])
        await _until_exit(app, pilot)
        assert app.return_code == 0
    assert _last_reason(path) == "why"


async def test_a_hold_for_a_worker_that_never_asks_lets_go_after_the_bound(tmp_path, monkeypatch):
    monkeypatch.setattr(key_hold, "HOLD_SECONDS", 0.4)
    path = copy_fixture(tmp_path)
    gate = asyncio.Event()

    async with editor(path) as (app, pilot):
        worker = app.run_worker(gate.wait(), group="test-hold")  # a flow that neither asks nor ends
        app.hold_keys(worker)
        burst(app, ["4"])
        await pilot.pause(0.1)
        assert app.keys_held == 1 and current_view(app) != "log"  # kept while the worker may still ask
        await pilot.pause(0.6)
        assert app.keys_held == 0 and current_view(app) == "log"  # handed on after the bound, not lost
        gate.set()
        await settle(pilot, app)
