"""Two sessions on one file, files changed on disk, and text that must stay literal."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

from steelyard.io.durability.lock import acquire, lock_path, this_host
from steelyard.tui.app import SteelyardApp
from steelyard.tui.screens.item_form import ItemForm
from support.ledgers import write_ledger
from support.tui import SIZE, answer_reason, copy_fixture, cursor_to, editor, screen_text, settle, type_into, wait_loaded


async def test_lock_refuses_a_second_writer(tmp_path):
    path = copy_fixture(tmp_path)
    on_disk = path.read_bytes()
    first = acquire(path)  # the first session (same user, this live process: not stale)
    try:
        async with editor(path) as (app, pilot):
            s = app.session
            assert s.read_only and s.lock is None
            assert f"{first.info.user}@{first.info.host}" in app.title and "read-only" in app.title
            assert "READ-ONLY" in screen_text(app)
            await pilot.press("a")  # refused, with the reason
            await pilot.pause()
            assert not isinstance(app.screen, ItemForm)
            await pilot.press("ctrl+s")
            await settle(pilot, app)
            assert path.read_bytes() == on_disk
            assert lock_path(path).exists() and first.held  # the first writer keeps its lock
    finally:
        first.release()


async def test_lock_is_taken_on_open_and_released_on_quit(tmp_path):
    path = copy_fixture(tmp_path)
    async with editor(path) as (app, pilot):
        assert app.session.lock is not None and lock_path(path).exists()
        await pilot.press("ctrl+q")
        await pilot.pause(0.2)
    assert not lock_path(path).exists()


async def test_stale_lock_is_offered_for_takeover(tmp_path):
    path = copy_fixture(tmp_path)
    dead = subprocess.run([sys.executable, "-c", "import os; print(os.getpid())"], capture_output=True,
                          text=True, check=True)
    pid = int(dead.stdout)  # that process has exited: its lock is stale
    lock_path(path).write_text(json.dumps({"program": "steelyard", "user": "someone", "host": this_host(),
                                           "pid": pid, "since": "2020-01-01T00:00:00Z", "token": "x"}))
    async with editor(path) as (app, pilot):
        await pilot.pause(0.2)
        text = screen_text(app)
        assert "stale" in text and "someone" in text
        await pilot.click("#answer-take")
        await pilot.pause(0.2)
        assert not app.session.read_only and app.session.lock is not None
        assert app.session.lock.held


async def test_file_changed_on_disk_makes_save_ask(tmp_path):
    path = copy_fixture(tmp_path)
    async with editor(path) as (app, pilot):
        await cursor_to(app, pilot, "wing-l")
        await pilot.press("d")
        await settle(pilot, app)
        theirs = path.read_text() + "\n# edited elsewhere\n"
        path.write_text(theirs)  # someone else saved meanwhile
        await pilot.press("ctrl+s")
        await answer_reason(app, pilot)
        await pilot.pause(0.3)
        assert "changed on disk" in screen_text(app).lower()
        await pilot.click("#answer-cancel")
        await settle(pilot, app)
        assert path.read_text() == theirs and app.session.dirty


NASTY = '''steelyard = 1
[[item]]
id = "bold"
name = "[b]x[/b]"
group = "[link=https://example.invalid]g[/link]"
mass = 1.0
cg = [1.0, 0.0, 0.0]
[[item]]
id = "esc"
name = "\\u001b[2Jcleared?"
mass = 2.0
cg = [2.0, 0.0, 0.0]
'''


async def test_markup_and_escape_sequences_in_names_show_literally(tmp_path):
    path = write_ledger(tmp_path, NASTY, "nasty.toml")
    async with editor(path, size=(120, 30)) as (app, pilot):
        await pilot.press("g")  # flat list: the group column shows too
        await pilot.pause()
        text = screen_text(app)
        assert "[b]x[/b]" in text  # markup is not interpreted
        assert "[link=https:/" in text  # the group column is 14 wide: cut, not interpreted
        assert "␛[2Jcleared?" in text  # the ESC shows as a visible symbol
        assert "\x1b[2J" not in text
        await pilot.press("home", "e")
        await pilot.pause()
        assert "[b]x[/b]" in screen_text(app)  # in the form too


async def test_read_only_session_can_save_as_elsewhere_and_edit_there(tmp_path):
    path = copy_fixture(tmp_path)
    first = acquire(path)
    try:
        async with editor(path) as (app, pilot):
            assert app.session.read_only
            await pilot.press("W")
            await pilot.pause()
            mine = tmp_path / "mine.toml"
            await type_into(app, pilot, "prompt-input", str(mine))
            await pilot.press("enter")
            await settle(pilot, app)
            assert mine.exists() and app.session.path == str(mine)
            assert not app.session.read_only and lock_path(mine).exists()
            await cursor_to(app, pilot, "wing-l")
            await pilot.press("m")  # move the item to another group: allowed now
            await pilot.pause()
            await type_into(app, pilot, "prompt-input", "spares")
            await pilot.press("enter")
            await settle(pilot, app)
            item_id = app.session.history.log[-1].item
            assert app.session.ledger.item(item_id).group == "spares"
            assert app.session.history.log[-1].action == "move"
        assert first.held  # the other session's lock on the original was never touched
    finally:
        first.release()


async def test_a_long_load_runs_in_a_thread_and_reports_progress(tmp_path):
    sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "perf"))
    from make_ledger import write_ledger

    from steelyard.tui.screens.loading_screen import LoadingScreen
    from steelyard.tui.messages import LoadProgress

    path = tmp_path / "big.toml"
    write_ledger(path, 20_000, seed=3)
    seen: list[LoadProgress] = []
    app = SteelyardApp(str(path))

    def hook(message) -> None:
        if isinstance(message, LoadProgress):
            seen.append(message)

    async with app.run_test(size=SIZE, message_hook=hook) as pilot:
        # shown while the worker reads (checked at once: a fast machine reads 20,000 items in well under
        # a second, and a pause waits for the loop to be idle)
        assert isinstance(app.screen, LoadingScreen) and app.session is None
        await wait_loaded(app, pilot, timeout=120)
        assert len(app.session.ledger.items) == 20_000
    assert any(m.phase == "checking items" for m in seen)
    assert not lock_path(path).exists()  # released when the app ended


async def test_save_as_keeps_the_files_comments_and_layout(tmp_path):
    # what people wrote in the file (its comments, the text of untouched values) goes with it to the new
    # name; the source's own lines are the reference, the items are read back with tomllib
    import tomllib

    path = copy_fixture(tmp_path)
    target = tmp_path / "copy.toml"
    async with editor(path) as (app, pilot):
        await cursor_to(app, pilot, "wing-l")
        await pilot.press("d")  # one change: a duplicate of wing-l
        await settle(pilot, app)
        await pilot.press("W")
        await pilot.pause()
        await type_into(app, pilot, "prompt-input", str(target))
        await pilot.press("enter")
        await answer_reason(app, pilot)
        await settle(pilot, app)
        assert not app.session.dirty and app.session.path == str(target)
    source = path.read_text().splitlines()
    comments = [line for line in source if line.lstrip().startswith("#")]
    assert len(comments) > 10
    assert [line for line in target.read_text().splitlines() if line.lstrip().startswith("#")] == comments
    assert len(tomllib.loads(target.read_text())["item"]) == len(tomllib.loads(path.read_text())["item"]) + 1
