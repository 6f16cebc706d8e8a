"""Opening a placed file in place: its own lock and journal, edit, save, back; the parent's totals
move by exactly what the saved file changed (by hand, exact: support.assembly)."""

from __future__ import annotations

import os

import steelyard.io.durability.journal as J
from steelyard.io.durability.lock import lock_path
from steelyard.tui.screens.confirm import ConfirmScreen
from support.assembly import as_floats, close, copy_tree, said, totals
from support.tui import answer_reason, cursor_to, editor, settle, type_into, wait_for_screen, wait_loaded


async def _open_pod(app, pilot):
    await cursor_to(app, pilot, "pod-rl/esc")
    await pilot.press("o")
    await pilot.pause(0.2)
    await wait_loaded(app, pilot)
    await settle(pilot, app)


async def _motor_mass(app, pilot, grams: str):
    await cursor_to(app, pilot, "motor")
    await pilot.press("e")
    await pilot.pause(0.2)
    await type_into(app, pilot, "f-mass", grams)
    await pilot.press("enter")
    await settle(pilot, app)


async def test_open_edit_save_back_refreshes_the_parent_by_the_exact_change(tmp_path):
    path = copy_tree(tmp_path)
    pod = path.parent / "pods" / "lift-pod.toml"
    async with editor(path) as (app, pilot):
        await settle(pilot, app)
        parent = app.session
        await _open_pod(app, pilot)
        child = app.session
        assert child is not parent and os.path.samefile(child.path, pod)
        assert "lift-pod.toml" in app.title and "in quad-freighter.toml" in app.title
        # each file its own lock (and the parent keeps its own while the child is open)
        assert lock_path(pod).exists() and lock_path(path).exists() and child.lock is not None
        await _motor_mass(app, pilot, "500")
        assert J.pending(pod) is not None and J.pending(path) is None  # the child's journal, not the parent's
        await pilot.press("ctrl+s")
        await answer_reason(app, pilot)
        await settle(pilot, app)
        assert not child.dirty
        await pilot.press("backspace")
        await settle(pilot, app)
        assert app.session is parent and not lock_path(pod).exists()
        # four pods, each motor 410 g -> 500 g; worked out by hand with exact placement (sympy)
        mass0, cg0 = as_floats(totals())
        mass1, cg1 = as_floats(totals(motor_g=500))
        mp = parent.totals().mp
        assert close(mp.mass, mass1) and close(mp.mass - mass0, 0.36)
        assert all(close(a, b, 1.0) for a, b in zip(mp.cg, cg1))
        assert [it.mass for it in parent.ledger.items if it.id.endswith("/motor")] == [0.5] * 4
        # not an edit of the parent: no unsaved work, nothing journaled, nothing logged
        assert not parent.dirty and J.pending(path) is None and not parent.history.can_undo
        assert "pods/lift-pod.toml was saved: quad-freighter.toml now" in said(app)


async def test_back_with_unsaved_child_work_asks_save_discard_stay(tmp_path):
    path = copy_tree(tmp_path)
    pod = path.parent / "pods" / "lift-pod.toml"
    on_disk = pod.read_bytes()
    async with editor(path) as (app, pilot):
        await settle(pilot, app)
        parent = app.session
        before = parent.ledger
        await _open_pod(app, pilot)
        child = app.session
        await _motor_mass(app, pilot, "450")
        await pilot.press("backspace")
        await wait_for_screen(app, pilot, ConfirmScreen, what="the unsaved-work question")
        await pilot.click("#answer-stay")
        await settle(pilot, app)
        assert app.session is child and child.dirty  # stayed, edits kept
        await pilot.press("backspace")
        await wait_for_screen(app, pilot, ConfirmScreen, what="asked again")
        await pilot.click("#answer-discard")
        await settle(pilot, app)
        assert app.session is parent and parent.ledger is before  # nothing saved: nothing to refresh
        assert pod.read_bytes() == on_disk and J.pending(pod) is None
        await pilot.press("backspace")  # the top file: nothing to go back to
        await settle(pilot, app)
        assert app.session is parent and "top file" in said(app)


async def test_undo_after_a_placed_file_was_saved_keeps_its_new_contents(tmp_path):
    path = copy_tree(tmp_path)
    async with editor(path) as (app, pilot):
        await settle(pilot, app)
        parent = app.session
        await cursor_to(app, pilot, "hub")  # an own edit first: 3.8 kg -> 4.8 kg
        await pilot.press("e")
        await pilot.pause(0.2)
        await type_into(app, pilot, "f-mass", "4.8")
        await pilot.press("enter")
        await settle(pilot, app)
        await _open_pod(app, pilot)
        await _motor_mass(app, pilot, "500")
        await pilot.press("ctrl+s")
        await answer_reason(app, pilot)
        await settle(pilot, app)
        await pilot.press("backspace")
        await settle(pilot, app)
        assert app.session is parent and parent.dirty  # the hub edit is still unsaved
        await pilot.press("ctrl+z")  # undo the hub edit: the pods stay as saved (500 g motors)
        await settle(pilot, app)
        mass1, cg1 = as_floats(totals(motor_g=500))
        mp = parent.totals().mp
        assert close(mp.mass, mass1) and all(close(a, b, 1.0) for a, b in zip(mp.cg, cg1))
        assert not parent.dirty  # back at the file as saved
        await pilot.press("ctrl+y")  # redo: the hub edit again, on the new pods
        await settle(pilot, app)
        mp = parent.totals().mp
        assert parent.dirty and close(mp.mass, mass1 + 1.0)
