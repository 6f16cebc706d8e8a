"""Adding, moving and removing a placement: an edit of the parent with a live preview, undo, change
log and journal; a bad placement (missing file, cycle, '/' in its id, an id in use) changes nothing.
Expected totals by hand with exact placement (support.assembly: sympy, the contract's order)."""

from __future__ import annotations

import steelyard.io.durability.journal as J
from steelyard.io.ledger.file import open_ledger
from steelyard.tui.screens.assembly_form import AssemblyForm
from steelyard.tui.screens.choice_screen import ChoiceScreen
from steelyard.tui.state.assembly import placed_reader
from support.assembly import PODS, as_floats, close, copy_tree, totals
from support.tui import cursor_to, editor, screen_text, settle, type_into, wait_for_screen

from fractions import Fraction as F


def _same(mp, exact) -> bool:
    mass, cg = as_floats(exact)
    return close(mp.mass, mass) and all(close(a, b, 1.0) for a, b in zip(mp.cg, cg))


async def _form(app, pilot, row: str | None = None):
    if row is not None:
        await cursor_to(app, pilot, row)
    await pilot.press("A")
    await wait_for_screen(app, pilot, ChoiceScreen, what="the list of placements")
    await pilot.press("enter")  # the placement under the cursor is highlighted; else "+ place another"
    await wait_for_screen(app, pilot, AssemblyForm, what="the placement form")


async def test_add_move_remove_with_undo_back_to_the_exact_totals(tmp_path):
    path = copy_tree(tmp_path)
    async with editor(path) as (app, pilot):
        await settle(pilot, app)
        s = app.session
        start = s.totals().mp
        assert _same(start, totals())

        # add: a fifth pod on the tail, turned half round
        await _form(app, pilot)
        for field, text in (("a-id", "pod-tail"), ("a-file", "pods/lift-pod.toml"), ("a-group", "propulsion"),
                            ("a-x", "1.5"), ("a-y", "0"), ("a-z", "0.12"), ("a-rotate", "z 180")):
            await type_into(app, pilot, field, text)
        assert "Δmass +0.9130 kg" in screen_text(app)  # the live preview: one pod, 913 g (pod file)
        await pilot.press("enter")
        await settle(pilot, app)
        added = dict(PODS, **{"pod-tail": ((F("1.5"), 0, F("0.12")), None, 180)})
        assert _same(s.totals().mp, totals(added))
        assert "pod-tail/motor" in s.ledger.index and s.ledger.item("pod-tail/motor").source == "pod-tail"
        last = s.log[-1]
        assert (last.action, last.item, last.before) == ("assembly", "pod-tail", None)
        assert last.after["file"] == "pods/lift-pod.toml" and last.after["at"] == [1.5, 0.0, 0.12]

        # move: pod-fr 0.10 m aft
        await _form(app, pilot, "pod-fr/arm")
        await type_into(app, pilot, "a-x", "0.27")
        await pilot.press("enter")
        await settle(pilot, app)
        moved = dict(added, **{"pod-fr": ((F("0.27"), F("0.45"), F("0.12")), None, -45)})
        assert _same(s.totals().mp, totals(moved))
        assert s.log[-1].before["at"] == [0.17, 0.45, 0.12] and s.log[-1].after["at"] == [0.27, 0.45, 0.12]

        # remove pod-rl
        await _form(app, pilot, "pod-rl/motor")
        await pilot.click("#asm-remove")
        await settle(pilot, app)
        removed = {k: v for k, v in moved.items() if k != "pod-rl"}
        assert _same(s.totals().mp, totals(removed)) and "pod-rl/motor" not in s.ledger.index
        assert s.log[-1].after is None and s.log[-1].before["id"] == "pod-rl"

        # the journal holds the three edits; replayed onto the file as read it gives the same tree
        records = J.pending(path).records
        assert len(records) == 3
        replayed = J.replay(open_ledger(path).ledger, records, children=placed_reader(str(path)))
        assert [it.id for it in replayed.items] == [it.id for it in s.ledger.items]
        assert tuple(replayed.assemblies) == tuple(s.ledger.assemblies)
        assert _same(s.totals_for(replayed).mp, totals(removed))

        # undo, undo, undo: back to exactly the totals before (the same numbers, bit for bit)
        for expected in (moved, added, None):
            await pilot.press("ctrl+z")
            await settle(pilot, app)
            assert _same(s.totals().mp, totals(expected))
        end = s.totals().mp
        assert end.mass == start.mass and list(end.cg) == list(start.cg)
        assert not s.dirty


async def test_bad_placements_show_a_message_and_change_nothing(tmp_path):
    path = copy_tree(tmp_path)
    loop = path.parent / "pods" / "loop.toml"  # a file that places the vehicle: placing it closes a cycle
    loop.write_text('steelyard = 1\n[[assembly]]\nid = "back"\nfile = "../quad-freighter.toml"\nat = [0, 0, 0]\n')
    async with editor(path) as (app, pilot):
        await settle(pilot, app)
        s = app.session
        before = s.ledger
        await _form(app, pilot)
        await type_into(app, pilot, "a-id", "pod-x")
        cases = (("a-file", "pods/no-such-pod.toml", "no such file"),
                 ("a-file", "quad-freighter.toml", "cycle"),
                 ("a-file", "pods/loop.toml", "cycle"),
                 ("a-id", "pod/x", "must not contain '/'"),
                 ("a-id", "hub", "same id"))
        await type_into(app, pilot, "a-file", "pods/lift-pod.toml")
        for field, text, words in cases:
            await type_into(app, pilot, field, text)
            shown = screen_text(app)
            assert "✗" in shown and words in shown, (text, app.screen, app.screen_stack, shown[-900:])
            await pilot.press("enter")  # refused: the form stays, nothing is applied
            await pilot.pause(0.1)
            assert isinstance(app.screen, AssemblyForm) and s.ledger is before
            if field == "a-id":
                await type_into(app, pilot, "a-id", "pod-x")
            else:
                await type_into(app, pilot, "a-file", "pods/lift-pod.toml")
        await pilot.press("escape")
        await settle(pilot, app)
        assert s.ledger is before and not s.history.can_undo and J.pending(path) is None


async def test_a_placement_left_unsaved_is_restored_from_the_journal(tmp_path):
    from steelyard.tui.screens.restore_screen import RestoreScreen

    path = copy_tree(tmp_path)
    async with editor(path) as (app, pilot):  # a session that adds a placement, then is gone unsaved
        await settle(pilot, app)
        await _form(app, pilot)
        for field, text in (("a-id", "pod-tail"), ("a-file", "pods/lift-pod.toml"), ("a-x", "1.5"),
                            ("a-z", "0.12"), ("a-rotate", "z 180")):
            await type_into(app, pilot, field, text)
        await pilot.press("enter")
        await settle(pilot, app)
        assert app.session.dirty
        app.session.close_journal()  # as a killed process would leave it: records kept, file closed
    assert J.pending(path) is not None
    async with editor(path, wait=False) as (app, pilot):
        for _ in range(200):
            await pilot.pause(0.05)
            if isinstance(app.screen, RestoreScreen):
                break
        assert isinstance(app.screen, RestoreScreen)
        await pilot.pause(0.3)  # painted
        assert "placed pods/lift-pod.toml as pod-tail" in " ".join(screen_text(app).split())
        await pilot.press("enter")  # Restore
        await settle(pilot, app)
        s = app.session
        added = dict(PODS, **{"pod-tail": ((F("1.5"), 0, F("0.12")), None, 180)})
        assert _same(s.totals().mp, totals(added)) and s.ledger.item("pod-tail/esc").source == "pod-tail"
        assert (s.log[-1].action, s.log[-1].item) == ("assembly", "pod-tail")
        await pilot.press("ctrl+z")
        await settle(pilot, app)
        assert _same(s.totals().mp, totals()) and not s.dirty
