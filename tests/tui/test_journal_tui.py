"""No edit is lost: the journal of unsaved edits, in the editor.

Two kinds of test. The first kills the real program: `python -m steelyard
FILE` in a detached tmux session at 80x24 (its own socket), an edit typed with
`send-keys`, then SIGKILL (a crash) or SIGHUP (what a dropped SSH session
sends); reopening must offer the edit, say what it is, and restore it. The
file is read back with tomllib, never with steelyard. Waits are generous and
the screen is polled, so a loaded machine only makes them slower.

The second drives the App headlessly against journals an earlier session
left (written with io.journal): what the offer shows, restore, discard,
"later", a file changed since, and the journal's life across saves.
Expected totals come from exact fractions (CG = Σ moment / Σ mass,
FAA-H-8083-1; NIST SP 811 pound and inch).
"""

from __future__ import annotations

import os
import signal
import time
import tomllib

import pytest

import steelyard.io.durability.journal as J
from steelyard.io.ledger.file import open_ledger
from steelyard.tui.screens.confirm import ConfirmScreen
from steelyard.tui.screens.restore_screen import RestoreScreen
from support.exact import close, exact_totals
from support.tmux import AVIONICS as LEDGER
from support.tui import answer_reason, copy_fixture, editor, screen_text, settle, wait_loaded
from support.units import LB


# ----------------------------------------------------------------- the real program, killed


def _gone(pid: int, timeout: float = 30.0) -> None:
    end = time.monotonic() + timeout
    while time.monotonic() < end:
        try:
            os.kill(pid, 0)
        except ProcessLookupError:
            return
        time.sleep(0.1)
    raise AssertionError(f"process {pid} is still running")


@pytest.mark.slow  # the real program in tmux, killed and started again
@pytest.mark.parametrize("sig", [signal.SIGKILL, signal.SIGHUP])
def test_killed_mid_edit_then_reopened_offers_and_restores_the_edit(tmp_path, sig, tmux):
    path = tmp_path / "ledger.toml"
    path.write_text(LEDGER)
    on_disk = path.read_bytes()
    tmux.key_gap, tmux.poll, tmux.wait = 0.15, 0.25, 60.0
    pid = tmux.start("first", tmp_path, path.name)
    tmux.wait_for("first", "Mass ")
    # rows: the group "avionics", then shelf, radio; the cursor starts on the group
    tmux.keys("first", "Down", "e")
    tmux.wait_for("first", "Edit item shelf")
    tmux.keys("first", "End", *["BSpace"] * 6, "5", ".", "2", "5")
    tmux.wait_for("first", "Δmass +0.8500 lb")  # 5.25 - 4.4 lb, before applying
    tmux.keys("first", "Enter")
    tmux.wait_for("first", "* ledger.toml")  # applied, not saved
    tmux.wait_for("first", "5.250")
    os.kill(pid, sig)  # a crash, or the terminal's hang-up when an SSH session drops
    _gone(pid)
    assert path.read_bytes() == on_disk  # nothing was saved
    assert J.journal_path(path).exists()  # the edit is in the journal

    pid = tmux.start("second", tmp_path, path.name)
    if sig == signal.SIGKILL:  # a killed process leaves its lock: stale, offered for takeover
        tmux.wait_for("second", "stale lock")
        tmux.keys("second", "Enter")  # Take over
    screen = tmux.wait_for("second", "Unsaved edits found")
    flat = " ".join(screen.split())
    assert "1 unsaved edit by" in flat and "Items: shelf" in flat
    assert "edited shelf: mass 4.4 lb → 5.25 lb" in flat  # what would be restored, each number with its unit
    assert "as it is on disk" in flat  # the journal matches the file
    tmux.keys("second", "Enter")  # Restore
    tmux.wait_for("second", "Restored 1 unsaved edit")
    screen = tmux.wait_for("second", "5.250")
    assert "* ledger.toml" in screen  # restored edits are unsaved work
    tmux.keys("second", "C-s")
    tmux.wait_for("second", "reason for the change")  # the save asks why (optional): Enter skips
    tmux.keys("second", "Enter")
    tmux.wait_for("second", "ledger.toml — steelyard")  # saved: the title's marker is gone
    tmux.keys("second", "C-q")
    _gone(pid)
    data = tomllib.loads(path.read_text())
    assert next(it for it in data["item"] if it["id"] == "shelf")["mass"] == 5.25
    assert data["change"][-1]["item"] == "shelf" and data["change"][-1]["action"] == "edit"
    assert not J.journal_path(path).exists()  # quit after saving: nothing left to restore


# ------------------------------------------------------------ journals an earlier session left


def _left_journal(path, edits: list[tuple[str, float]]) -> None:
    """A session that journaled mass edits (item id, new mass in lb) and then died."""
    loaded = open_ledger(path)
    ledger = loaded.ledger
    journal = J.Journal.open(path, loaded.sha256, user="someone")
    for item_id, lb in edits:
        item = ledger.item(item_id)
        new = ledger.with_item(item.evolve(mass=lb * 0.45359237))
        journal.record(ledger, new, change={"action": "edit", "item": item_id, "author": "someone",
                                            "summary": f"edited {item_id}: mass → {lb}",
                                            "when": "2026-01-02T03:04:05Z", "loadout": None})
        ledger = new
    journal.close()  # unsaved edits: the journal stays


async def _offer(app, pilot) -> RestoreScreen:
    await wait_loaded(app, pilot)
    for _ in range(100):
        if isinstance(app.screen, RestoreScreen):
            return app.screen
        await pilot.pause(0.05)
    raise AssertionError("no restore offer")


async def test_restore_rebuilds_edits_change_log_and_undo(tmp_path):
    path = copy_fixture(tmp_path)
    _left_journal(path, [("wing-l", 150.0), ("wing-r", 151.0)])
    async with editor(path, wait=False) as (app, pilot):
        await _offer(app, pilot)
        text = " ".join(screen_text(app).split())
        assert "2 unsaved edits by someone@" in text and "Items: wing-l, wing-r" in text
        assert "1. edited wing-l: mass → 150.0" in text and "2. edited wing-r: mass → 151.0" in text
        await pilot.press("enter")  # Restore
        await settle(pilot, app)
        s = app.session
        assert s.dirty and not s.read_only
        # each wing panel is 99 lb in the file: +51 and +52 lb
        mass, _cg = exact_totals(path)
        assert close(s.totals().mp.mass, mass + 103 * LB)
        assert [c.item for c in s.log[-2:]] == ["wing-l", "wing-r"]
        assert s.log[-1].author == "someone" and s.log[-1].time == "2026-01-02T03:04:05Z"
        assert close(s.log[-1].effect.d_mass, 52 * LB)
        await pilot.press("u")  # undo goes back through restored edits one by one
        await pilot.press("u")
        await settle(pilot, app)
        assert s.ledger is s.saved and not s.dirty
        await pilot.press("ctrl+q")
        await pilot.pause(0.3)
    assert not J.journal_path(path).exists()


async def test_discard_asks_once_more_then_drops_the_journal(tmp_path):
    path = copy_fixture(tmp_path)
    _left_journal(path, [("wing-l", 150.0)])
    async with editor(path, wait=False) as (app, pilot):
        await _offer(app, pilot)
        await pilot.press("tab", "enter")  # Discard them
        await pilot.pause(0.2)
        assert isinstance(app.screen, ConfirmScreen)
        await pilot.press("enter")  # Discard
        await settle(pilot, app)
        s = app.session
        assert not s.dirty and not s.read_only and s.journal is not None
        assert J.pending(path) is None  # nothing waits any more
        mass, _cg = exact_totals(path)
        assert close(s.totals().mp.mass, mass)


async def test_later_keeps_the_journal_and_opens_read_only(tmp_path):
    path = copy_fixture(tmp_path)
    _left_journal(path, [("wing-l", 150.0)])
    before = J.journal_path(path).read_bytes()
    async with editor(path, wait=False) as (app, pilot):
        await _offer(app, pilot)
        await pilot.press("escape")  # Later
        await settle(pilot, app)
        s = app.session
        assert s.read_only and "READ-ONLY" in screen_text(app)
        await pilot.press("a")  # refused
        await pilot.pause()
        assert not s.dirty
        await pilot.press("ctrl+q")
        await pilot.pause(0.3)
    assert J.journal_path(path).read_bytes() == before  # untouched, offered again next time


async def test_a_file_changed_since_is_said_and_restoring_is_still_possible(tmp_path):
    path = copy_fixture(tmp_path)
    _left_journal(path, [("wing-l", 150.0)])
    path.write_text(path.read_text() + "\n# edited by hand since\n")
    async with editor(path, wait=False) as (app, pilot):
        await _offer(app, pilot)
        text = " ".join(screen_text(app).split())
        assert "WARNING: the file has changed since these edits were made" in text
        assert "Restore anyway" in text
        await pilot.press("enter")
        await settle(pilot, app)
        s = app.session
        assert s.dirty and close(s.ledger.item("wing-l").mass, 150 * LB)
        # the journal now starts from the file as it is, holding the restored state
        state = J.pending(path)
        assert state is not None and state.in_use and state.matches  # ours, live, based on the file now
        assert len(state.records) == 1 and s.journal.unsaved == 1


async def test_edits_are_journaled_and_a_save_starts_it_over(tmp_path):
    path = copy_fixture(tmp_path)
    async with editor(path) as (app, pilot):
        s = app.session
        assert s.journal is not None and s.journal.unsaved == 0
        item = s.ledger.item("wing-l")
        app._apply(s.ledger.with_item(item.evolve(mass=item.mass + 1.0)), action="edit", item="wing-l",
                   summary="heavier")
        await settle(pilot, app)
        assert s.journal.unsaved == 1
        # what a crash now would leave: the edit, replayable onto the file on disk
        records = [r for r in _records(path) if r.get("op") != "saved"]
        replayed = J.replay(open_ledger(path).ledger, records)
        assert replayed.item("wing-l").mass == item.mass + 1.0
        await pilot.press("u")
        await settle(pilot, app)
        assert s.journal.unsaved == 2  # the undo is journaled too
        await pilot.press("U")
        await settle(pilot, app)
        path_before = path.read_bytes()
        await pilot.press("ctrl+s")
        await answer_reason(app, pilot)  # Enter: no reason given
        await settle(pilot, app)
        assert not isinstance(app.screen, ConfirmScreen)  # the fixture has comments: kept, nothing to ask
        assert path.read_bytes() != path_before and not s.dirty
        assert path.read_text().startswith("# Tarnwick T-2")  # its first line, a comment, is still there
        assert s.journal.unsaved == 0 and J.pending(path) is None  # the saved edits are not offered again
        await pilot.press("ctrl+q")
        await pilot.pause(0.3)
    assert not J.journal_path(path).exists()


def _records(path) -> list[dict]:
    out = []
    for line in J.journal_path(path).read_bytes().splitlines()[1:]:
        rec = J.decode_line(line)
        if rec is not None:
            out.append(rec)
    return out

