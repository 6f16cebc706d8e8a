"""Whole editing flows through the real App at 80x24, driven only by keys.

Expected totals come from `exact_totals` (tomllib + exact fractions, NIST SP
811 pound and inch), never from the program's own output.
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np

from support.sigfig import length_text, sig_text
from steelyard.io.ledger.demo import demo_path
from steelyard.tui.app import SteelyardApp
from steelyard.tui.screens.item_form import ItemForm
from support.exact import close, exact_totals
from support.paths import DEMO
from support.tui import SIZE, answer_reason, copy_fixture, cursor_to, editor, screen_text, settle, type_into
from support.units import LB


async def test_open_the_demo_shows_table_totals_and_caution():
    async with editor(None) as (app, pilot):
        text = screen_text(app)
        s = app.session
        assert s.demo and s.path is None and not s.dirty
        assert "copy of the demo" in app.title
        mass, cg = exact_totals(DEMO)
        # the shown total equals the exact sum (FAA-H-8083-1: CG = Σ moment / Σ weight), in lb
        assert f"Mass {sig_text(mass / LB)} lb" in text  # 5 significant figures (docs/numbers.md)
        assert close(s.totals().mp.mass, mass) and all(close(s.totals().mp.cg[k], cg[k]) for k in range(3))
        assert "INSIDE" in text or "OUTSIDE" in text  # status in words, not colour alone
        assert "Planning aid only" in text
        assert "avionics" in text and "aft-shelf" in text


async def test_add_item_through_the_form_changes_totals_exactly(tmp_path):
    path = copy_fixture(tmp_path)
    async with editor(path) as (app, pilot):
        await pilot.press("a")
        await pilot.pause()
        assert isinstance(app.screen, ItemForm)
        for field, value in (("f-id", "radio-2"), ("f-name", "Second radio"), ("f-mass", "2.3 lb"),
                             ("f-x", "142 in"), ("f-y", "0"), ("f-z", "24")):
            await type_into(app, pilot, field, value)
        preview = screen_text(app)
        assert "Δmass +2.3000 lb" in preview  # shown before anything is applied
        assert app.session.history.can_undo is False
        await pilot.press("enter")
        await settle(pilot, app)
        assert not isinstance(app.screen, ItemForm)
        mass, cg = exact_totals(path, [("2.3 lb", "142 in", "0 in", "24 in")])
        mp = app.session.totals().mp
        assert close(mp.mass, mass) and all(close(mp.cg[k], cg[k]) for k in range(3))
        text = screen_text(app)
        assert f"Mass {sig_text(mass / LB)} lb" in text  # 5 significant figures (docs/numbers.md)
        assert f"x {length_text(cg[0] / Fraction('0.0254'), 1 / Fraction('0.0254'))} aft" in text
        change = app.session.history.log[-1]
        assert change.action == "add" and change.item == "radio-2"
        # the recorded effect is the exact Δmass: 2.3 lb (NIST SP 811), and ΔCG the exact CG shift
        assert close(change.effect.d_mass, Fraction("2.3") * LB)
        _m0, cg0 = exact_totals(path)
        assert all(abs(Fraction(change.effect.d_cg[k]) - (cg[k] - cg0[k])) < Fraction(1, 10 ** 13) for k in range(3))


async def test_undo_restores_bit_identical_totals_and_redo_reapplies(tmp_path):
    path = copy_fixture(tmp_path)
    async with editor(path) as (app, pilot):
        before = app.session.totals().mp
        shown_before = screen_text(app).splitlines()[-4:-1]
        await cursor_to(app, pilot, "wing-l")
        await pilot.press("e")
        await pilot.pause()
        await type_into(app, pilot, "f-mass", "150")
        await pilot.press("enter")
        await settle(pilot, app)
        after = app.session.totals().mp
        assert after.mass != before.mass
        assert app.session.dirty and app.title.startswith("* ")
        await pilot.press("ctrl+z")
        await settle(pilot, app)
        undone = app.session.totals().mp
        assert undone.mass == before.mass  # bit-identical, not merely close
        assert np.array_equal(undone.cg, before.cg)
        assert np.array_equal(undone.inertia_cg, before.inertia_cg)
        assert not app.session.dirty
        assert screen_text(app).splitlines()[-4:-1] == shown_before
        await pilot.press("ctrl+y")
        await settle(pilot, app)
        assert app.session.totals().mp.mass == after.mass


async def test_invalid_entry_shows_its_message_and_changes_nothing(tmp_path):
    path = copy_fixture(tmp_path)
    on_disk = path.read_bytes()
    async with editor(path) as (app, pilot):
        ledger = app.session.ledger
        await cursor_to(app, pilot, "wing-l")
        await pilot.press("e")
        await pilot.pause()
        await type_into(app, pilot, "f-mass", "12 parsecs")
        text = screen_text(app)
        assert "✗ mass [lb]:" in text  # the label the form shows (trainer: lb)
        assert app.screen.query_one("#f-mass").has_class("bad")
        await pilot.press("enter")  # refused: the form stays, nothing applied
        await pilot.pause()
        assert isinstance(app.screen, ItemForm)
        await type_into(app, pilot, "f-mass", "-3")
        assert "must not be negative" in screen_text(app)
        await pilot.press("escape")
        await pilot.pause()
        assert app.session.ledger is ledger
        assert not app.session.history.can_undo and not app.session.dirty
        assert path.read_bytes() == on_disk


async def test_save_reopen_equal_and_change_log_kept(tmp_path):
    path = copy_fixture(tmp_path)  # has comments: a save keeps them without asking
    comments = [line for line in path.read_text().splitlines() if line.lstrip().startswith("#")]
    async with editor(path) as (app, pilot):
        await cursor_to(app, pilot, "wing-l")
        await pilot.press("d")  # duplicate
        await settle(pilot, app)
        await pilot.press("ctrl+s")
        await answer_reason(app, pilot)
        await settle(pilot, app)
        assert not app.session.dirty
        assert [line for line in path.read_text().splitlines() if line.lstrip().startswith("#")] == comments
        saved = app.session.ledger
        author = app.session.author
    from steelyard.core.history.changes import log_from_ledger
    from steelyard.io.ledger.file import open_ledger

    reopened = open_ledger(path).ledger
    assert reopened.items == saved.items
    assert reopened.loadouts == saved.loadouts and reopened.envelopes == saved.envelopes
    log = log_from_ledger(reopened)
    assert len(log) == 1 and log[0].action == "duplicate" and log[0].author == author
    async with editor(path) as (app2, pilot):
        await pilot.press("4")
        await pilot.pause()
        assert "duplicate" in screen_text(app2)  # the log is there after reopening


async def test_demo_save_asks_where_and_never_writes_the_package(tmp_path):
    original = demo_path().read_bytes()
    async with editor(None) as (app, pilot):
        await cursor_to(app, pilot, "wing-l")
        await pilot.press("x")
        await pilot.pause()
        await pilot.click("#answer-delete")
        await settle(pilot, app)
        assert app.session.dirty
        await pilot.press("ctrl+s")
        await pilot.pause(0.2)
        assert "Save as" in screen_text(app)
        target = tmp_path / "mine.toml"
        await type_into(app, pilot, "prompt-input", str(target))
        await pilot.press("enter")
        await answer_reason(app, pilot)
        await settle(pilot, app)
        assert target.exists() and app.session.path == str(target) and not app.session.dirty
        assert "copy of the demo" not in app.title
    assert demo_path().read_bytes() == original


async def test_quit_with_unsaved_work_asks(tmp_path):
    path = copy_fixture(tmp_path)
    async with editor(path) as (app, pilot):
        await cursor_to(app, pilot, "wing-l")
        await pilot.press("d")
        await settle(pilot, app)
        await pilot.press("ctrl+q")
        await pilot.pause(0.2)
        assert "unsaved changes" in screen_text(app).lower()
        await pilot.press("escape")  # Escape = Cancel: still running, work kept
        await pilot.pause(0.2)
        assert app.is_running and app.session.dirty


def test_bad_file_exits_with_code_2_and_one_line(tmp_path, capsys):
    # The app is run as the program runs it (headless), not under run_test: a file that fails
    # to load ends the app before its first screen, which run_test's wait for a screen can
    # report as a timeout on a loaded machine. The guard ends a run that never exits with 99.
    bad = tmp_path / "bad.toml"
    bad.write_text("steelyard = 1\n[[item]]\nid = 'a'\nmass = -1\ncg = [0, 0, 0]\n")
    app = SteelyardApp(str(bad))

    async def guard(pilot) -> None:
        for _ in range(400):
            await pilot.pause(0.05)
            if app.return_code is not None:  # the load failure ended it
                return
        app.exit(return_code=99)

    app.run(headless=True, size=SIZE, auto_pilot=guard)
    assert app.return_code == 2
    # the one message, nothing else (rich may fold it at the terminal's width: compare without white space)
    out = capsys.readouterr()
    shown = "".join((out.out + out.err).split())
    assert shown == "".join(f"steelyard: {bad}: item 'a': mass: must be >= 0, got -1".split()), shown
