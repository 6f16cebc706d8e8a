"""Placed items in the editor: shown with their full ids and the file they come from, read-only in
the parent (an inline message says whose they are), never journaled or logged as the parent's own."""

from __future__ import annotations

import json

import steelyard.io.durability.journal as J
from steelyard.io.ledger.file import open_ledger
from steelyard.tui.screens.confirm import ConfirmScreen
from steelyard.tui.screens.item_form import ItemForm
from steelyard.tui.screens.prompt import TextPrompt
from support.assembly import as_floats, close, copy_tree, said, totals
from support.tui import cursor_to, editor, screen_text, settle, type_into


async def test_placed_rows_show_full_ids_and_their_file(tmp_path):
    path = copy_tree(tmp_path)
    async with editor(path) as (app, pilot):
        await settle(pilot, app)
        text = screen_text(app)
        # the group row of each placement names its file; each placed row its file's name (80x24)
        assert "pod-fl ‹lift-pod› (5)" in text
        assert "pod-fl/motor" in text and "‹lift-pod›" in text
        ids = {it.id for it in app.session.ledger.items}
        # the contract: items of an assembly appear as <assembly id>/<item id> (DESIGN, assemblies)
        assert {f"{p}/{i}" for p in ("pod-fr", "pod-rr", "pod-fl", "pod-rl") for i in
                ("motor", "propeller", "esc", "arm", "trim-cup")} <= ids
        # the totals are the whole tree's, against exact placement by hand (support.assembly, sympy)
        mass, cg = as_floats(totals())
        mp = app.session.totals().mp
        assert close(mp.mass, mass) and all(close(a, b, 1.0) for a, b in zip(mp.cg, cg))


async def test_a_placed_item_is_refused_for_every_edit(tmp_path):
    path = copy_tree(tmp_path)
    on_disk = path.read_bytes()
    async with editor(path) as (app, pilot):
        await settle(pilot, app)
        before = app.session.ledger
        await cursor_to(app, pilot, "pod-fr/motor")
        for key in ("e", "enter", "x", "d", "m"):
            await pilot.press(key)
            await pilot.pause(0.1)
            assert not isinstance(app.screen, (ItemForm, ConfirmScreen, TextPrompt)), key
        assert app.session.ledger is before and not app.session.history.can_undo
        message = said(app)
        assert "pod-fr/motor belongs to pods/lift-pod.toml" in message
        assert "Press o to open pods/lift-pod.toml" in message
        await pilot.press("ctrl+z")  # nothing of this session to undo
        await settle(pilot, app)
        assert app.session.ledger is before
        assert J.pending(path) is None  # nothing was journaled
    assert path.read_bytes() == on_disk


async def test_an_own_edit_of_a_tree_is_journaled_as_the_files_own_only(tmp_path):
    path = copy_tree(tmp_path)
    async with editor(path) as (app, pilot):
        await settle(pilot, app)
        await cursor_to(app, pilot, "hub")
        await pilot.press("e")
        await pilot.pause(0.2)
        await type_into(app, pilot, "f-mass", "4.3")
        await pilot.press("enter")
        await settle(pilot, app)
        await pilot.press("x")  # delete an own item too: the rows after it (all placed) move up
        await pilot.pause(0.2)
        await pilot.click("#answer-delete")
        await settle(pilot, app)
        live = app.session.ledger
        state = J.pending(path)
        assert state is not None and len(state.records) == 2
        text = json.dumps(list(state.records))
        assert "pod-" not in text.replace('"summary"', "")  # no placed item, no placement, in any record
        # the change log has the two own edits only
        assert [(c.action, c.item) for c in app.session.log[-2:]] == [("edit", "hub"), ("delete", "hub")]
        # a replay onto the file as read gives the same flat ledger: own items, then the placed ones
        replayed = J.replay(open_ledger(path).ledger, state.records)
        assert [it.id for it in replayed.items] == [it.id for it in live.items]
        assert [(q.id, q.start, q.stop) for q in replayed.placed] == [(q.id, q.start, q.stop) for q in live.placed]
        assert all(it.source is None for it in replayed.items[:3]) and replayed.items[3].source == "pod-fr"
        # Δmass of the edit and delete: -3.8 kg (the hub gone) — exact, by hand
        mass0, _ = as_floats(totals())
        assert close(app.session.totals().mp.mass, mass0 - 3.8)
