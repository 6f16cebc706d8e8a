"""The weighing form through the real App at 80x24.

Check values: the AMT General Handbook (FAA-H-8083-30, ch. 4) weighing
example as REFERENCES.md states its inputs (figure numbers from memory):
readings 650, 640, 225 lb, tares 5, 5, 2.5 lb, mains at +70 in, nose at
−30 in; 30 gal of fuel at 5.9 lb/gal (177 lb) at +95 in on board, 6 lb of
unusable fuel at +98 in added back. Net = reading − tare, CG = Σ net × arm /
Σ net (FAA-H-8083-1). Recomputed here with exact fractions.
"""

from __future__ import annotations

import tomllib
from fractions import Fraction
from pathlib import Path

from support.sigfig import length_text, sig_text
from steelyard.tui.screens.weighing_form import WeighingForm
from support.paths import FIXTURES
from support.tui import burst, copy_fixture, editor, screen_text, settle, type_into
from support.units import IN as INCH
from support.units import LB

EXAMPLE = FIXTURES / "weighing-example.toml"

NET = [Fraction(650) - 5, Fraction(640) - 5, Fraction(225) - Fraction("2.5")]
ARM = [Fraction(70), Fraction(70), Fraction(-30)]
FUEL = 30 * Fraction("5.9")  # lb
EMPTY = sum(NET) - FUEL + 6
EMPTY_MOMENT = sum(n * a for n, a in zip(NET, ARM)) - FUEL * 95 + 6 * 98
# lateral arms are the fixture's invented ±45 in: (645 − 635) × −45 / 1331.5 lb
EMPTY_Y = (NET[0] * -45 + NET[1] * 45) / EMPTY


def test_check_values_are_the_handbook_ones():
    # REFERENCES.md: empty weight 1,331.5 lb, moment 66,698 lb·in, CG +50.09 in
    assert EMPTY == Fraction("1331.5") and EMPTY_MOMENT == 66698
    assert round(float(EMPTY_MOMENT / EMPTY), 2) == 50.09


async def _apply(app, pilot) -> None:
    app.screen.query_one("#weigh-apply").focus()
    await pilot.pause()
    await pilot.press("enter")
    await settle(pilot, app)


async def test_form_prefilled_from_the_file_reduces_live_and_replaces_the_empty_item(tmp_path):
    path = copy_fixture(tmp_path, EXAMPLE)
    async with editor(path) as (app, pilot):
        old = app.session.ledger.item("empty-vehicle")
        await pilot.press("w")
        await pilot.pause(0.3)
        assert isinstance(app.screen, WeighingForm)
        text = " ".join(screen_text(app).split())
        for net in NET:
            assert sig_text(net) in text  # net per scale point
        assert f"Weighed {sig_text(sum(NET))} lb" in text
        assert f"Empty {sig_text(EMPTY)} lb, CG x {length_text(EMPTY_MOMENT / EMPTY, 1 / Fraction('0.0254'))}" in text
        assert f"mass {sig_text(1310)} → {sig_text(EMPTY)} lb" in text  # the replaced item, old → new
        await _apply(app, pilot)
        assert not isinstance(app.screen, WeighingForm)
        new = app.session.ledger.item("empty-vehicle")
        assert abs(Fraction(new.mass) - EMPTY * LB) < Fraction(1, 10 ** 12)
        assert abs(Fraction(new.cg[0]) - EMPTY_MOMENT / EMPTY * INCH) < Fraction(1, 10 ** 12)
        assert abs(Fraction(new.cg[1]) - EMPTY_Y * INCH) < Fraction(1, 10 ** 12)
        assert new.cg[2] == old.cg[2]  # a level weighing leaves the vertical CG as it was
        change = app.session.log[-1]
        assert change.action == "weighing" and change.item == "empty-vehicle"
        # the change log keeps old and new values (SI)
        assert change.before["mass_kg"] == old.mass and abs(Fraction(change.after["mass_kg"]) - EMPTY * LB) < \
            Fraction(1, 10 ** 12)
        assert abs(Fraction(change.effect.d_mass) - (EMPTY - 1310) * LB) < Fraction(1, 10 ** 12)
        await pilot.press("4")
        await pilot.pause(0.2)
        assert "weighing empty-vehicle" in screen_text(app)
        # saved with the weighing record; undo would bring the estimate back
        await pilot.press("1")
        app.session.save()
        data = tomllib.loads(Path(path).read_text())
        item = next(it for it in data["item"] if it["id"] == "empty-vehicle")
        assert abs(Fraction(item["mass"]) - EMPTY) < Fraction(1, 10 ** 9)
        assert item["maturity"] == "measured"
        assert [p["name"] for p in data["weighing"]["point"]] == ["left main", "right main", "nose"]
        assert data["change"][-1]["action"] == "weighing"
        await pilot.press("u")
        await settle(pilot, app)
        assert app.session.ledger.item("empty-vehicle") == old


async def test_typed_readings_and_a_bad_tare_change_nothing_until_fixed(tmp_path):
    path = copy_fixture(tmp_path, EXAMPLE)
    async with editor(path) as (app, pilot):
        before = app.session.ledger
        await pilot.press("w")
        await pilot.pause(0.3)
        await type_into(app, pilot, "w-point-2-tare", "300")  # more than the nose reading (225)
        text = " ".join(screen_text(app).split())
        assert "tare exceeds the reading" in text and "'nose'" in text
        assert app.screen.query_one("#w-point-2-tare").has_class("bad")
        await _apply(app, pilot)
        assert isinstance(app.screen, WeighingForm) and app.session.ledger is before  # refused
        # a reading typed with its own unit: 102.0582 kg is 225 lb (NIST SP 811: 1 lb = 0.45359237 kg)
        await type_into(app, pilot, "w-point-2-tare", "2.5")
        await type_into(app, pilot, "w-point-2-reading", "102.05828325 kg")
        text = " ".join(screen_text(app).split())
        assert f"Empty {sig_text(EMPTY)} lb" in text
        # a point's name is user text: markup stays literal, an escape sequence shows as a visible symbol
        await type_into(app, pilot, "w-point-2-name", "[b]nose[/b]")
        assert screen_text(app).count("[b]nose[/b]") == 2  # in its field and, as typed, in the net readings
        assert "[b]nose[/b] 222.5 lb" in str(app.screen.query_one("#weigh-result").content)
        await pilot.press("escape")
        await pilot.pause()
        assert app.session.ledger is before and not app.session.dirty


async def test_a_ledger_without_a_weighing_table_starts_empty_and_takes_typed_points(tmp_path):
    path = tmp_path / "ledger.toml"
    text = EXAMPLE.read_text()
    path.write_text(text[: text.index("[weighing]")])
    async with editor(path) as (app, pilot):
        await pilot.press("w")
        await pilot.pause(0.3)
        form = app.screen
        assert form.query_one("#weigh-replaces").value == "empty-vehicle"  # guessed from its id
        for row, (x, y, reading, tare) in enumerate([("70", "-45", "650", "5"), ("70", "45", "640", "5"),
                                                      ("-30", "0", "225", "2.5")]):
            for key, value in (("name", f"p{row}"), ("x", x), ("y", y), ("z", "0"), ("reading", reading),
                               ("tare", tare)):
                await type_into(app, pilot, f"w-point-{row}-{key}", value)
        text = " ".join(screen_text(app).split())
        # nothing on board or missing: empty = weighed
        assert f"Empty {sig_text(sum(NET))} lb" in text
        moment = sum(n * a for n, a in zip(NET, ARM))
        await _apply(app, pilot)
        new = app.session.ledger.item("empty-vehicle")
        assert abs(Fraction(new.cg[0]) - moment / sum(NET) * INCH) < Fraction(1, 10 ** 12)
        assert app.session.ledger.weighing["point"][2]["reading"] == 225.0


async def test_apply_typed_right_behind_a_reading_takes_that_reading(tmp_path):
    # a burst (a fast typist, a paste over SSH): the nose tare 2.5 -> 12.5 lb, Tab to Apply, Enter, all
    # queued at once; Apply must see 12.5 (net nose 212.5 lb), not the 2.5 whose change is on its way
    path = copy_fixture(tmp_path, EXAMPLE)
    async with editor(path) as (app, pilot):
        await pilot.press("w")
        await pilot.pause(0.3)
        form = app.screen
        field = form.query_one("#w-point-2-tare")
        field.focus()
        await pilot.pause()
        chain = form.focus_chain
        tabs = chain.index(form.query_one("#weigh-apply")) - chain.index(field)
        burst(app, [*["end", "home"] * 40, "1", *["tab"] * tabs, "enter"])  # many keys for the field to take
        await settle(pilot, app)
        assert not isinstance(app.screen, WeighingForm)
        new = app.session.ledger.item("empty-vehicle")
        assert abs(Fraction(new.mass) - (EMPTY - 10) * LB) < Fraction(1, 10 ** 12)
