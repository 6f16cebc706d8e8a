"""The item form's keystroke preview (a delta on the other rows' sums) against the totals after Apply.

Reference: core's full roll-up of the edited ledger as the session shows it
after Apply (itself checked against exact sums and sympy in test_rollup.py);
the delta arithmetic alone is checked against exact fractions and sympy in
test_rollup_delta.py. The preview shown while typing must be the text the
applied totals give, and its figures the same to rounding.
"""

from __future__ import annotations

import numpy as np
from numpy.testing import assert_allclose
from textual.widgets import Static

from steelyard.tui.screens.item_form import ItemForm
from steelyard.tui.state.form_preview import FormPreview
from steelyard.tui.state.form_values import item_from_fields
from steelyard.tui.state.preview import preview_text
from support.tui import copy_fixture, editor, settle, type_into


def shown_preview(app) -> str:
    return str(app.screen.query_one("#form-preview", Static).content)


async def edit_and_apply(app, pilot, item_id: str | None, typed: list[tuple[str, str]]):
    """Open the form (None: add), type, note the preview and the delta's totals, Apply; return all."""
    s = app.session
    before, ledger = s.totals(), s.ledger
    original = None if item_id is None else ledger.item(item_id)
    if item_id is None:
        await pilot.press("a")
    else:
        await app.edit_item(item_id)
    await pilot.pause()
    form = app.screen
    assert isinstance(form, ItemForm)
    for field, value in typed:
        await type_into(app, pilot, field, value)
    await settle(pilot, app)
    text = shown_preview(app)
    item = item_from_fields(form.fields(), original, ledger)
    delta = FormPreview(ledger, before, original).totals(item)
    await pilot.press("enter")
    await settle(pilot, app)
    assert not isinstance(app.screen, ItemForm)
    return before, text, delta, s.totals()


def same_totals(delta, after) -> None:
    assert delta is not None and after.mp is not None
    a, b = delta.mp, after.mp
    assert abs(a.mass - b.mass) <= 1e-12 * b.mass
    assert_allclose(a.cg, b.cg, rtol=1e-12, atol=1e-12)
    scale = np.abs(b.inertia_cg).max()
    assert_allclose(a.inertia_cg, b.inertia_cg, rtol=1e-10, atol=1e-12 * scale)
    assert_allclose(a.inertia_datum, b.inertia_datum, rtol=1e-10)
    assert [r.margin for r in delta.envelopes] == [r.margin for r in after.envelopes] or all(
        (x is None and y is None) or abs(x - y) <= 1e-9 for x, y in
        zip([r.margin for r in delta.envelopes], [r.margin for r in after.envelopes]))
    assert [f.ok for f in delta.check.findings] == [f.ok for f in after.check.findings]


async def test_edit_a_fixed_item_with_inertia_preview_equals_the_applied_totals(tmp_path):
    path = copy_fixture(tmp_path)
    async with editor(path) as (app, pilot):
        app.session.set_loadout("two-up-full-fuel")
        before, text, delta, after = await edit_and_apply(
            app, pilot, "fuselage-cabin", [("f-mass", "61.5 kg"), ("f-x", "95.25"), ("f-z", "-3")])
        same_totals(delta, after)
        assert "Δmass" in text
        assert text == str(preview_text(before, after, app.session.ledger.frame, app.session.units))


async def test_add_an_item_preview_equals_the_applied_totals(tmp_path):
    path = copy_fixture(tmp_path)
    async with editor(path) as (app, pilot):
        before, text, delta, after = await edit_and_apply(
            app, pilot, None, [("f-id", "radio-3"), ("f-mass", "4.4 lb"), ("f-x", "60"), ("f-y", "-10"),
                               ("f-z", "30"), ("f-quantity", "3")])
        same_totals(delta, after)
        assert text == str(preview_text(before, after, app.session.ledger.frame, app.session.units))


async def test_a_variable_item_is_previewed_by_the_full_roll_up_and_still_matches(tmp_path):
    """Loadout amounts may depend on a variable item's own mass: the delta leaves those to the full path."""
    path = copy_fixture(tmp_path)
    async with editor(path) as (app, pilot):
        app.session.set_loadout("two-up-full-fuel")
        before, text, delta, after = await edit_and_apply(app, pilot, "baggage", [("f-x", "110")])
        assert delta is None  # not covered by the delta
        assert text == str(preview_text(before, after, app.session.ledger.frame, app.session.units))
