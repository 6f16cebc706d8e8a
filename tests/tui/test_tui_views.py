"""Loadouts, amounts, the table's view keys, help and the command palette."""

from __future__ import annotations

from fractions import Fraction

from steelyard.tui.app import PALETTE
from steelyard.tui.screens.help_screen import HelpScreen
from steelyard.tui.keys import MAIN_KEYS, pretty_keys
from steelyard.tui.screens.loadout_screen import LoadoutScreen
from steelyard.tui.state.rows import SORT_KEYS
from support.exact import close, exact_totals
from support.tui import copy_fixture, editor, screen_text, settle, type_into, wait_for_screen
from support.units import LB


async def test_switch_loadout_and_edit_an_amount(tmp_path):
    path = copy_fixture(tmp_path)
    async with editor(path) as (app, pilot):
        await pilot.press("L")
        await pilot.pause()
        assert isinstance(app.screen, LoadoutScreen)
        names = [lo.name for lo in app.session.ledger.loadouts]
        await pilot.press(*["down"] * (1 + names.index("takeoff")), "enter")
        await settle(pilot, app)
        assert app.session.loadout == "takeoff"
        empty, _ = exact_totals(path)
        # takeoff in the file: pilot 77 kg, passenger 132 lb, 2 x 12 US gal at 6 lb/gal (72 lb each:
        # the density is per US gallon, so the volume cancels exactly), baggage 68 lb
        loaded = empty + Fraction(77) + (132 + 72 + 72 + 68) * LB
        assert close(app.session.totals().mp.mass, loaded)
        await pilot.press("tab", "enter")  # amounts list: the first variable item is the pilot
        await pilot.pause()
        await type_into(app, pilot, "amount-input", "500 kg")
        assert "more than" in screen_text(app)  # the seat holds 250 lb: refused at once
        await pilot.press("enter")
        await pilot.pause()
        assert close(app.session.totals().mp.mass, loaded)  # nothing applied
        await type_into(app, pilot, "amount-input", "90 kg")
        await pilot.press("enter")
        await settle(pilot, app)
        assert close(app.session.totals().mp.mass, loaded + 13)  # 90 kg instead of 77 kg
        change = app.session.history.log[-1]
        assert change.action == "loadout" and change.item == "takeoff"
        await pilot.press("escape")
        await pilot.pause()
        assert "loadout takeoff" in screen_text(app)


async def test_units_switch_sort_filter_and_fold(tmp_path):
    path = copy_fixture(tmp_path)
    async with editor(path) as (app, pilot):
        mass, _ = exact_totals(path)
        await pilot.press("t")  # SI
        await pilot.pause()
        from support.sigfig import sig_text

        # 5 significant figures of the exact total (docs/numbers.md); LB exact per NIST SP 811
        assert f"Mass {sig_text(mass)} kg" in screen_text(app)
        await pilot.press("t")  # US customary
        await pilot.pause()
        assert f"Mass {sig_text(mass / LB)} lb" in screen_text(app)
        table = app.main.table
        await pilot.press("g")  # flat list: no group rows
        await pilot.pause()
        assert len(table.rows) == len(app.session.ledger.items)
        for _ in range(SORT_KEYS.index("mass")):  # from file order: id, name, group, mass
            await pilot.press("s")
        await pilot.pause()
        assert table.spec.sort == "mass"
        masses = [table.mass[i] for i in table.rows]
        assert masses == sorted(masses)
        await pilot.press("S")
        await pilot.pause()
        masses = [table.mass[i] for i in table.rows]
        assert masses == sorted(masses, reverse=True)
        await pilot.press("slash", *"battery")
        await pilot.pause()
        shown = {app.session.ledger.items[i].id for i in table.rows}
        expected = {it.id for it in app.session.ledger.items if "battery" in f"{it.id} {it.name} {it.group}".lower()}
        assert shown == expected and shown
        await pilot.press("escape", "g")  # leave the filter (cleared), back to groups
        await pilot.pause()
        assert table.spec.filter == "" and table.spec.grouped
        rows_open = len(table.rows)
        await pilot.press("minus")  # fold all: only the top-level groups remain
        await pilot.pause()
        top = {it.group.split("/")[0] or "(ungrouped)" for it in app.session.ledger.items}
        assert len(table.rows) == len(top) < rows_open
        await pilot.press("plus")
        await pilot.pause()
        assert len(table.rows) == rows_open


async def test_views_show_totals_envelopes_with_caution_and_log(tmp_path):
    path = copy_fixture(tmp_path)
    async with editor(path) as (app, pilot):
        await pilot.press("2")
        await pilot.pause()
        text = screen_text(app)
        assert "x (+aft, station)" in text and "Principal moments" in text and "∫xy dm" in text
        await pilot.press("3")
        await pilot.pause()
        text = screen_text(app)
        assert "normal (x):" in text and ("INSIDE" in text or "OUTSIDE" in text)
        assert "Planning aid only" in text and "licensed personnel" in text
        await pilot.press("n")
        await pilot.pause()
        assert "Chart: utility" in screen_text(app)
        await pilot.press("4")
        await pilot.pause()
        assert "No changes yet." in screen_text(app)


async def test_help_lists_every_key_and_palette_has_the_main_actions(tmp_path):
    async with editor(copy_fixture(tmp_path)) as (app, pilot):
        await pilot.press("f1")
        await pilot.pause()
        assert isinstance(app.screen, HelpScreen)
        text = str(app.screen.query_one("#help-text").content)
        flat = " ".join(text.split())  # descriptions wrap at 80 columns
        for keys, _action, _label, _show, description in MAIN_KEYS:
            assert pretty_keys(keys) in text and " ".join(description.split()) in flat
        await pilot.press("escape")
        await pilot.pause()
        titles = {c.title for c in app.get_system_commands(app.screen)}
        for title, _help, _action in PALETTE:
            assert title in titles
        assert {"Add item", "Save", "Undo", "Loadout", "Compare…", "Weighing form", "Next sequence"} <= titles
        for section in ("Compare screen", "Weighing form", "Unsaved edits found"):
            assert section in text
        # every palette entry names an action that exists
        for _t, _h, action in PALETTE:
            if action.startswith("view"):
                continue
            assert callable(getattr(app, f"action_{action}"))


def test_docs_list_every_key():
    from pathlib import Path

    doc = (Path(__file__).resolve().parents[2] / "docs" / "tui.md").read_text().lower()
    for keys, _action, _label, _show, _text in MAIN_KEYS:
        for key in pretty_keys(keys).lower().split(" / "):
            assert f"`{key}`" in doc, key


async def test_palette_opens_the_compare_and_weighing_screens(tmp_path):
    from steelyard.tui.screens.choice_screen import ChoiceScreen
    from steelyard.tui.screens.weighing_form import WeighingForm

    async with editor(copy_fixture(tmp_path)) as (app, pilot):
        for typed, screen in (("Weighing form", WeighingForm), ("Compare", ChoiceScreen)):
            await pilot.press("ctrl+p")
            await pilot.pause(0.3)
            await pilot.press(*["space" if ch == " " else ch for ch in typed])
            await pilot.pause(0.5)
            await pilot.press("enter")
            await wait_for_screen(app, pilot, screen, tries=40, what=typed)
            await pilot.press("escape")
            await pilot.pause(0.2)
