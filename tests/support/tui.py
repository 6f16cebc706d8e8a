"""Helpers for the editor's Pilot tests: open, wait, read the screen, type.

Expected totals come from support.exact (tomllib and exact fractions), never
from the program.
"""

from __future__ import annotations

import asyncio
import io
import shutil
from contextlib import asynccontextmanager
from pathlib import Path

from rich.console import Console

from support.paths import TRAINER

SIZE = (80, 24)  # the smallest terminal the editor supports, and the size its tests use


def copy_fixture(tmp_path: Path, source: Path = TRAINER, name: str = "ledger.toml") -> Path:
    target = tmp_path / name
    shutil.copyfile(source, target)
    return target


@asynccontextmanager
async def editor(path, size: tuple[int, int] = SIZE, wait: bool = True):
    """The editor on `path` (None: the demo), headless, once the ledger has loaded: (app, pilot)."""
    from steelyard.tui.app import SteelyardApp

    app = SteelyardApp(None if path is None else str(path))
    async with app.run_test(size=size) as pilot:
        if wait:
            await wait_loaded(app, pilot)
        yield app, pilot


async def wait_loaded(app, pilot, timeout: float = 20.0) -> None:
    from steelyard.tui.screens.loading_screen import LoadingScreen

    waited = 0.0
    while app.session is None or isinstance(app.screen, LoadingScreen):
        await pilot.pause(0.05)
        waited += 0.05
        if waited > timeout:
            raise AssertionError("the ledger did not load")
    await pilot.pause(0.1)


async def wait_for_screen(app, pilot, screen_type, tries: int = 100, what: str | None = None) -> None:
    """Pause until the top screen is a `screen_type`, at most `tries` x 50 ms; fails otherwise (saying `what`)."""
    for _ in range(tries):
        await pilot.pause(0.05)
        if isinstance(app.screen, screen_type):
            break
    assert isinstance(app.screen, screen_type), what


async def settle(pilot, app, rounds: int = 3, timeout: float = 60.0) -> None:
    """Let workers (subtotals, saves) finish and the screen repaint. A worker still running after
    `timeout` seconds (one waiting for an answer no test gives) fails the test instead of hanging it."""
    for _ in range(rounds):
        try:
            await asyncio.wait_for(app.workers.wait_for_complete(), timeout)
        except TimeoutError:
            running = [w.description or w.name for w in app.workers if not w.is_finished]
            raise AssertionError(f"workers still running after {timeout:g} s: {running}; "
                                 f"top screen {type(app.screen).__name__}") from None
        await pilot.pause(0.05)


def screen_text(app) -> str:
    """What the terminal shows, as plain text."""
    console = Console(width=app.size.width, height=app.size.height, record=True, file=io.StringIO(),
                      force_terminal=True, color_system=None)
    console.print(app.screen._compositor.render_update(full=True))
    return console.export_text()


async def type_into(app, pilot, widget_id: str, text: str, *, clear: bool = True) -> None:
    """Focus a form field and type into it key by key, as a user would."""
    box = app.screen.query_one(f"#{widget_id}")
    box.focus()
    await pilot.pause()
    if clear:
        box.action_select_all()
        await pilot.press("backspace")
    keys = ["space" if ch == " " else ch for ch in text]
    if keys:
        await pilot.press(*keys)
    await pilot.pause()


async def cursor_to(app, pilot, item_id: str, limit: int = 400) -> None:
    """Press Down until the table's cursor is on `item_id` (keyboard only, like a user)."""
    table = app.main.table
    await pilot.press("home")
    for _ in range(limit):
        if table.current_item_id == item_id:
            return
        await pilot.press("down")
    raise AssertionError(f"{item_id!r} is not in the table")


async def answer_reason(app, pilot, reason: str = "", request: str = "") -> None:
    """Answer the question a save asks about unsaved changes (Enter alone skips it)."""
    from steelyard.tui.screens.reason_prompt import ReasonPrompt

    await wait_for_screen(app, pilot, ReasonPrompt, what="the save did not ask for a reason")
    if reason:
        await type_into(app, pilot, "reason-input", reason)
    if request:
        await type_into(app, pilot, "request-input", request)
    await pilot.press("enter")
    await pilot.pause()


CHARACTERS = {"space": " ", "tab": "\t", "enter": "\r"}


def burst(app, keys) -> None:
    """Every key queued on the App at once, as a fast typist or a paste without bracketing sends them."""
    from textual import events

    for key in keys:
        app.post_message(events.Key(key, CHARACTERS.get(key, key if len(key) == 1 else None)))


def current_view(app) -> str:
    """The main screen's view (table, log, ...): which ContentSwitcher pane is shown."""
    from textual.widgets import ContentSwitcher

    return app.main.query_one(ContentSwitcher).current


async def unsaved_change(app, pilot) -> None:
    """Duplicate wing-l (fixtures/trainer.toml): one unsaved change with no reason yet."""
    await cursor_to(app, pilot, "wing-l")
    await pilot.press("d")
    await settle(pilot, app)
    assert app.session.dirty


async def key_on_item(app, pilot, item_id: str, key: str, screen_type) -> None:
    """Put the cursor on `item_id`, press `key` and wait for the `screen_type` it opens."""
    await cursor_to(app, pilot, item_id)
    await pilot.press(key)
    await wait_for_screen(app, pilot, screen_type)


async def at_the_reason(app, pilot) -> None:
    """One unsaved change (`unsaved_change`), then Ctrl+S, up to its reason question."""
    from steelyard.tui.screens.reason_prompt import ReasonPrompt

    await unsaved_change(app, pilot)
    await pilot.press("ctrl+s")
    await wait_for_screen(app, pilot, ReasonPrompt)
