"""The editor's load: the read starts under a laid-out loading dialog, the table then shows the file,
the collector is handed everything back, and a file that fails to load stays untouched and unwritable."""

from __future__ import annotations

import gc
import os
import re
import sys
import tomllib
from pathlib import Path

import pytest

from steelyard.core.errors import SteelyardError
from steelyard.tui.app import SteelyardApp
from steelyard.tui.screens.loading_screen import LoadingScreen
from steelyard.tui.screens.main_screen import MainScreen
from support.tui import SIZE, copy_fixture, screen_text, settle, wait_loaded

sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "perf"))
from make_ledger import ledger_text  # noqa: E402

ROOT = Path(__file__).resolve().parents[2]


async def test_the_read_starts_under_the_dialog_and_the_table_shows_the_file(tmp_path, monkeypatch):
    import steelyard.tui.flows.file as file_flows

    path = tmp_path / "gen.toml"
    path.write_text(ledger_text(3000, seed=11))
    # the reference: the file's items in file order, as Python's own TOML reader (tomllib) reads them
    items = tomllib.loads(path.read_text())["item"]
    ids = [item["id"] for item in items]
    app = SteelyardApp(str(path))
    at_read: list = []
    read = file_flows.read_ledger

    def watched(source, progress=None):
        top = app.screen_stack[-1]
        phase = top.query_one("#load-phase") if isinstance(top, LoadingScreen) else None
        at_read.append((type(top).__name__, phase is not None and phase.region.width > 0, gc.isenabled()))
        return read(source, progress)

    monkeypatch.setattr(file_flows, "read_ledger", watched)
    async with app.run_test(size=SIZE) as pilot:
        await wait_loaded(app, pilot)
        await settle(pilot, app)
        # the dialog was on top and laid out before the reading began, with the collector paused for it
        assert at_read == [("LoadingScreen", True, False)]
        assert isinstance(app.screen, MainScreen) and app._loading not in app.screen_stack
        shown = screen_text(app)
        # grouped by default: the first group's header counts the items under it (its subgroups' too),
        # and its own items follow in file order
        head = re.search(r"▾ (\S+) \((\d+)\)", shown)
        assert head, shown
        under = [item for item in items if f"{item.get('group')}/".startswith(f"{head[1]}/")]
        assert int(head[2]) == len(under)
        own = [item["id"] for item in under if item.get("group") == head[1]]
        assert all(i in shown for i in own[:5]), shown
        assert len(app.session.ledger.items) == len(ids)
        assert [it.id for it in app.session.ledger.items] == ids
        # nothing the load froze stays out of the collector's reach, and it runs again
        assert gc.isenabled() and gc.get_freeze_count() == 0
        app.session.release_lock()


async def test_progress_repaints_only_what_changed():
    app = SteelyardApp(str(ROOT / "fixtures" / "trainer.toml"))
    async with app.run_test(size=SIZE) as pilot:
        await wait_loaded(app, pilot)
        dialog = LoadingScreen("x.toml")
        await app.push_screen(dialog)
        await pilot.pause()
        phase = dialog.query_one("#load-phase")
        before = phase.region
        dialog.progress("checking items", 0.25)
        dialog.progress("checking items", 0.5)  # same phase: the label is left alone
        await pilot.pause()
        assert "checking items" in screen_text(app)
        assert "50%" in screen_text(app)
        assert phase.region == before  # one line, laid out once
        app.pop_screen()
        app.session.release_lock()


@pytest.mark.parametrize("bad_name", ["negative-mass.toml", "not-toml.toml"])
async def test_a_file_that_fails_to_open_is_left_untouched_and_never_written(tmp_path, bad_name):
    bad = tmp_path / bad_name
    bad.write_bytes((ROOT / "fixtures" / "bad" / bad_name).read_bytes())
    before = bad.read_bytes(), bad.stat().st_mtime_ns
    good = copy_fixture(tmp_path)
    app = SteelyardApp(str(good))
    async with app.run_test(size=SIZE) as pilot:
        await wait_loaded(app, pilot)
        session = app.session
        app.start_load(str(bad), first=False)  # Open (O) another file
        for _ in range(100):
            await pilot.pause(0.05)
            if not isinstance(app.screen, LoadingScreen):
                break
        await settle(pilot, app)
        # an error naming the file, the session still the good one, the collector back on, nothing frozen
        notes = [n.message for n in app._notifications]
        assert any(str(bad) in m for m in notes), notes
        assert app.session is session and isinstance(app.screen, MainScreen)
        assert gc.isenabled() and gc.get_freeze_count() == 0
        with pytest.raises(SteelyardError, match="failed to load"):
            session.save(str(bad))  # Save as onto it: refused
        app.session.release_lock()
    assert (bad.read_bytes(), bad.stat().st_mtime_ns) == before
    assert not any(p.name.startswith(bad.name) and p != bad for p in tmp_path.iterdir()), os.listdir(tmp_path)
