"""The item form through the real App: numbers that Python's float() would take
("1_5" is 15 under PEP 515; float() reads any script's decimal digits) are
refused in the form with the file reader's words, and nothing is applied."""

from __future__ import annotations

import unicodedata

import pytest

from steelyard.tui.screens.item_form import ItemForm
from support.tui import copy_fixture, cursor_to, editor, screen_text, type_into

ARABIC_12 = unicodedata.lookup("ARABIC-INDIC DIGIT ONE") + unicodedata.lookup("ARABIC-INDIC DIGIT TWO")


@pytest.mark.parametrize("text", ["1_5", ARABIC_12])
async def test_form_refuses_numbers_float_would_take(tmp_path, text):
    assert float(text) in (15.0, 12.0)  # the hazard (PEP 515; Python docs for float())
    path = copy_fixture(tmp_path)
    on_disk = path.read_bytes()
    async with editor(path) as (app, pilot):
        ledger = app.session.ledger
        await cursor_to(app, pilot, "wing-l")
        await pilot.press("e")
        await pilot.pause()
        await type_into(app, pilot, "f-mass", text)
        shown = " ".join(screen_text(app).split())
        assert "✗ mass [lb]:" in shown and "ASCII digits" in shown  # the label the form shows
        assert app.screen.query_one("#f-mass").has_class("bad")
        await pilot.press("enter")  # refused: the form stays, nothing applied
        await pilot.pause()
        assert isinstance(app.screen, ItemForm)
        await pilot.press("escape")
        await pilot.pause()
        assert app.session.ledger is ledger and not app.session.dirty
        assert path.read_bytes() == on_disk
