"""The compare screen through the real App at 80x24, driven by keys.

Expected numbers are recomputed here with exact fractions from the test's
own inputs: CG = Σ moment / Σ mass (FAA-H-8083-1), and the CG shift of one
item alone by the handbook "weight added or removed" rule in vector form,
ΔCG = (m_b (r_b − c) − m_a (r_a − c)) / (M + m_b − m_a), with M and c of
side A (FAA-H-8083-1; docs/diff.md states the same rule).
"""

from __future__ import annotations

import subprocess
import sys
from fractions import Fraction

from steelyard.core.caution import CAUTION
from steelyard.core.display import fmt
from support.sigfig import length_text, sig_text
from steelyard.tui.screens.choice_screen import ChoiceScreen
from steelyard.tui.screens.compare_screen import CompareScreen
from steelyard.tui.screens.prompt import TextPrompt
from support.ledgers import write_ledger
from support.tui import editor, screen_text, settle, type_into, wait_for_screen
from support.units import IN as INCH
from support.units import LB

# an invented ledger: everything in lb and in, loadout amounts as fractions only
LEDGER = """steelyard = 1
[units]
mass = "lb"
length = "in"

[[item]]
id = "airframe"
name = "Airframe [b]bold[/b]"
mass = 1000.0
cg = [100.0, 0.0, 20.0]

[[item]]
id = "tank"
name = "Main tank"
mass = 120.0
cg = [110.0, 0.0, 30.0]
variable = true

[[item]]
id = "pilot"
name = "Pilot"
mass = 200.0
cg = [90.0, -10.0, 25.0]
variable = true

[[item]]
id = "bags"
name = "Baggage"
mass = 50.0
cg = [150.0, 0.0, 22.0]
variable = true

[[loadout]]
name = "full"
[loadout.set]
tank = 1.0
pilot = 1.0
bags = 1.0

[[loadout]]
name = "half"
[loadout.set]
tank = 0.5
pilot = 1.0

[[envelope]]
name = "normal"
axis = "x"
points = [[95.0, 1000.0], [95.0, 1400.0], [104.0, 1400.0], [104.0, 1000.0]]
"""

# carried rows (mass lb, x y z in) of each loadout, from the text above by hand
ROWS = {
    "full": {"airframe": (1000, (100, 0, 20)), "tank": (120, (110, 0, 30)), "pilot": (200, (90, -10, 25)),
             "bags": (50, (150, 0, 22))},
    "half": {"airframe": (1000, (100, 0, 20)), "tank": (60, (110, 0, 30)), "pilot": (200, (90, -10, 25)),
             "bags": (0, (150, 0, 22))},
}


def totals(rows: dict) -> tuple[Fraction, list[Fraction]]:
    m = sum(Fraction(v[0]) for v in rows.values())
    return m, [sum(Fraction(v[0]) * v[1][k] for v in rows.values()) / m for k in range(3)]


def alone(a: dict, b: dict, item: str) -> list[Fraction]:
    """How far B's row of `item` put into A moves A's CG (lb, in)."""
    m, c = totals(a)
    ma, ra = a[item]
    mb, rb = b[item]
    new = m + mb - ma
    return [(mb * (rb[k] - c[k]) - ma * (ra[k] - c[k])) / new for k in range(3)]


async def open_compare(app, pilot, choice_label: str) -> None:
    await pilot.press("c")
    await pilot.pause()
    assert isinstance(app.screen, ChoiceScreen)
    box = app.screen.query_one("#choice-list")
    labels = [str(box.get_option_at_index(i).prompt) for i in range(box.option_count)]
    target = next(i for i, label in enumerate(labels) if choice_label in label)
    await pilot.press("home", *["down"] * target, "enter")
    await wait_for_screen(app, pilot, CompareScreen)
    await pilot.pause(0.1)


async def test_compare_two_loadouts_totals_ranking_and_envelopes(tmp_path):
    path = write_ledger(tmp_path, LEDGER)
    async with editor(path) as (app, pilot):
        app.session.set_loadout("half")
        app.refresh_views()
        await settle(pilot, app)
        await open_compare(app, pilot, "loadout full")  # A = full, B = this ledger now (half)
        screen = app.screen
        diff = screen.diff
        (ma, ca), (mb, cb) = totals(ROWS["full"]), totals(ROWS["half"])
        text = screen_text(app)
        assert "A ledger.toml now, loadout full" in text and "B ledger.toml now, loadout half" in text
        assert "0 added, 0 removed, 2 changed" in text
        # totals side by side: A, B and B − A, in the file's units
        assert sig_text(ma) in text and sig_text(mb) in text and f"{fmt(float(mb - ma))}" in text
        assert length_text(ca[0], 1 / Fraction('0.0254')) in text and length_text(cb[0], 1 / Fraction('0.0254')) in text
        assert abs(Fraction(diff.delta_mass) - (mb - ma) * LB) <= Fraction(1, 10 ** 12)
        # ranking: each changed item alone, largest |ΔCG| first
        expected = sorted(("tank", "bags"), key=lambda i: -sum(float(x) ** 2 for x in alone(
            ROWS["full"], ROWS["half"], i)))
        assert [e.id for e in diff.ranked] == expected
        for e in diff.ranked:
            want = alone(ROWS["full"], ROWS["half"], e.id)
            assert all(abs(Fraction(e.cg_shift[k]) - want[k] * INCH) < Fraction(1, 10 ** 12) for k in range(3))
        # items tab: the list in rank order and the first item's fields old → new
        await pilot.press("2")
        await pilot.pause(0.2)
        text = screen_text(app)
        first = expected[0]
        assert text.index(f"changed  {first}") < text.index(f"changed  {expected[1]}")
        old, new = ROWS["full"][first][0], ROWS["half"][first][0]
        assert f"mass: {sig_text(old)} lb → {sig_text(new)} lb" in text
        # envelopes tab: status both sides, margin change and the caution
        await pilot.press("3")
        await pilot.pause(0.2)
        text = " ".join(screen_text(app).split())
        # normal envelope: fwd 95, aft 104 in at every mass here; margin = distance to the nearer limit
        margin = [min(c[0] - 95, 104 - c[0]) for c in (ca, cb)]
        assert f"margin {length_text(margin[0], 1 / Fraction('0.0254'))} → {length_text(margin[1], 1 / Fraction('0.0254'))} in" in text
        assert " ".join(CAUTION.split()) in text
        # swap: B against A becomes A against B
        await pilot.press("s")
        await settle(pilot, app)
        assert isinstance(app.screen, CompareScreen) and app.screen.a.loadout == "half"
        assert abs(Fraction(app.screen.diff.delta_mass) - (ma - mb) * LB) <= Fraction(1, 10 ** 12)
        await pilot.press("escape")
        await pilot.pause()
        assert not isinstance(app.screen, CompareScreen)


async def test_compare_with_the_saved_ledger_and_jump_to_the_added_item(tmp_path):
    path = write_ledger(tmp_path, LEDGER)
    async with editor(path) as (app, pilot):
        await pilot.press("a")
        await pilot.pause()
        for field, value in (("f-id", "radio-2"), ("f-name", "Radio [link=x]y[/link]"), ("f-mass", "2.3 lb"),
                             ("f-x", "142 in"), ("f-y", "0"), ("f-z", "24")):
            await type_into(app, pilot, field, value)
        await pilot.press("enter")
        await settle(pilot, app)
        await pilot.press("home")  # the cursor away from the new item
        await open_compare(app, pilot, "as last opened or saved")
        diff = app.screen.diff
        assert diff.added == ("radio-2",) and not diff.removed and not diff.changed
        # no loadout: the fixed airframe only, plus the radio (FAA-H-8083-1, weight added)
        base = {"airframe": ROWS["full"]["airframe"]}
        m0, c0 = totals(base)
        assert abs(Fraction(diff.delta_mass) - Fraction("2.3") * LB) <= Fraction(1, 10 ** 12)
        shift = (Fraction("2.3") * (142 - c0[0])) / (m0 + Fraction("2.3"))
        assert abs(Fraction(diff.ranked[0].cg_shift[0]) - shift * INCH) < Fraction(1, 10 ** 12)
        await pilot.press("2")
        await pilot.pause(0.2)
        text = screen_text(app)
        assert "added    radio-2" in text and "Radio [link=x]y[/link]" in text  # markup shown literally
        assert "(only in B)" in text
        await pilot.press("enter")
        await settle(pilot, app)
        assert not isinstance(app.screen, CompareScreen)
        assert app.main.view == "ledger" and app.main.table.current_item_id == "radio-2"


async def test_compare_with_a_snapshot_file_and_a_tampered_one(tmp_path):
    path = write_ledger(tmp_path, LEDGER)
    snap = tmp_path / "baseline.toml"
    subprocess.run([sys.executable, "-m", "steelyard", "snapshot", str(path), "--loadout", "full", "-o", str(snap)],
                   check=True, capture_output=True, timeout=60)
    tampered = tmp_path / "tampered.toml"
    text = snap.read_text()
    assert "mass = 1000.0" not in text  # SI in a snapshot: the airframe is 453.59237 kg
    tampered.write_text(text.replace("453.59237", "460.0", 1))
    async with editor(path) as (app, pilot):
        for target, verdict in ((snap, "its hash and totals check out"), (tampered, "CHECK FAILED")):
            await pilot.press("c")
            await pilot.pause()
            await pilot.press("end", "enter")  # the last choice: another file or snapshot
            await pilot.pause(0.2)
            assert isinstance(app.screen, TextPrompt)
            await type_into(app, pilot, "prompt-input", str(target))
            await pilot.press("enter")
            await wait_for_screen(app, pilot, CompareScreen, tries=200)
            shown = " ".join(screen_text(app).split())
            assert "(snapshot)" in shown and verdict in shown
            if target is snap:
                # A = the full loadout frozen, B = this ledger with no loadout: the three load items differ
                assert {c.id for c in app.screen.diff.changed} == {"tank", "pilot", "bags"}
            else:
                assert "content does not match its hash" in shown
            await pilot.press("escape")
            await pilot.pause()
