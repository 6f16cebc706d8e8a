"""A file placed two levels down (vehicle -> wing -> pod), edited through the wing: going back to the
vehicle refreshes its totals too. Expected totals are exact sums of the files' own numbers by hand
(translations only: each point lands at the sum of the `at` of its placements)."""

from __future__ import annotations

from fractions import Fraction as F

from support.assembly import close, said
from support.tui import answer_reason, cursor_to, editor, settle, type_into, wait_loaded

POD = """steelyard = 1
[[item]]
id = "motor"
mass = 2.0
cg = [0.1, 0.0, 0.0]
"""

WING = """steelyard = 1
[[item]]
id = "spar"
mass = 5.0
cg = [0.0, 1.0, 0.0]
[[assembly]]
id = "pod"
file = "pods/pod.toml"
at = [0.5, 2.0, 0.0]
"""

VEHICLE = """steelyard = 1
[[item]]
id = "hull"
mass = 20.0
cg = [1.0, 0.0, 0.0]
[[assembly]]
id = "wing"
file = "wing.toml"
at = [1.0, 0.0, 0.5]
"""


def _tree(tmp_path):
    (tmp_path / "pods").mkdir()
    (tmp_path / "pods" / "pod.toml").write_text(POD)
    (tmp_path / "wing.toml").write_text(WING)
    top = tmp_path / "vehicle.toml"
    top.write_text(VEHICLE)
    return top


def _expected(motor_kg):
    # hull at (1, 0, 0); spar at (1, 0, 0.5) + (0, 1, 0); motor at (1, 0, 0.5) + (0.5, 2, 0) + (0.1, 0, 0)
    points = [(F(20), (F(1), F(0), F(0))), (F(5), (F(1), F(1), F("0.5"))),
              (F(motor_kg), (F("1.6"), F(2), F("0.5")))]
    mass = sum(m for m, _ in points)
    return float(mass), [float(sum(m * p[k] for m, p in points) / mass) for k in range(3)]


async def _open_row(app, pilot, item_id):
    await cursor_to(app, pilot, item_id)
    await pilot.press("o")
    await pilot.pause(0.2)
    await wait_loaded(app, pilot)
    await settle(pilot, app)


async def test_a_grandchild_saved_through_its_parent_refreshes_the_top(tmp_path):
    path = _tree(tmp_path)
    async with editor(path) as (app, pilot):
        await settle(pilot, app)
        top = app.session
        mass0, _ = _expected(2)
        assert close(top.totals().mp.mass, mass0)
        await _open_row(app, pilot, "wing/spar")  # the wing, opened from the vehicle
        wing = app.session
        assert wing is not top
        await _open_row(app, pilot, "pod/motor")  # the pod, opened from the wing
        pod = app.session
        assert pod is not wing
        await cursor_to(app, pilot, "motor")
        await pilot.press("e")
        await pilot.pause(0.2)
        await type_into(app, pilot, "f-mass", "3")
        await pilot.press("enter")
        await settle(pilot, app)
        await pilot.press("ctrl+s")
        await answer_reason(app, pilot)
        await settle(pilot, app)
        await pilot.press("backspace")  # back in the wing: its placement of the pod is refreshed
        await settle(pilot, app)
        assert app.session is wing and not wing.dirty
        assert wing.ledger.item("pod/motor").mass == 3.0
        await pilot.press("backspace")  # back in the vehicle: the wing did not change, its pod did
        await settle(pilot, app)
        assert app.session is top
        mass1, cg1 = _expected(3)
        mp = top.totals().mp
        assert top.ledger.item("wing/pod/motor").mass == 3.0
        assert close(mp.mass, mass1) and all(close(a, b) for a, b in zip(mp.cg, cg1))
        assert not top.dirty  # not an edit of the vehicle's own file
        assert "a file placed in wing.toml was saved: vehicle.toml now" in said(app)
