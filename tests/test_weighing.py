"""Weighing reduction: net loads, weighed and empty mass and CG."""

import math
from fractions import Fraction as F

import numpy as np
import pytest

from steelyard.core.errors import SteelyardError
from steelyard.core.document.model import FileUnits, Frame, Item, Ledger
from steelyard.core.control.weighing import parse_weighing, reduce_weighing, replaced_item

LB, IN, GAL = 0.45359237, 0.0254, 3.785411784e-3  # NIST SP 811, exact

# FAA-H-8083-30 AMT General Handbook, ch. 4 weighing example (figure numbers from
# memory; the inputs below are the handbook's): datum at the wing leading edge,
# mains at +70 in, nose at -30 in; readings L 650, R 640, nose 225 lb; tares
# 5, 5, 2.5 lb; weighed with full fuel, 30 gal at +95 in at 5.9 lb/gal, of which
# 6 lb unusable at +98 in stays in the empty weight. The lateral positions
# (+/-45 in) are invented for this test: the example gives arms only.
ARMS = [70, 70, -30]
SIDE = [-45, 45, 0]
READ = [F(650), F(640), F(225)]
TARE = [F(5), F(5), F(5, 2)]


def _handbook():
    """Exact reduction from the handbook formulas (net = reading - tare, CG = moment / weight)."""
    net = [r - t for r, t in zip(READ, TARE)]
    weighed = sum(net)
    moment = sum(n * a for n, a in zip(net, ARMS))
    fuel = 30 * F(59, 10)
    empty = weighed - fuel + 6
    empty_moment = moment - fuel * 95 + 6 * 98
    side_moment = sum(n * y for n, y in zip(net, SIDE))
    return net, weighed, moment, empty, empty_moment, side_moment


def test_handbook_example_derivation():
    net, weighed, moment, empty, empty_moment, _ = _handbook()
    assert net == [645, 635, F(445, 2)] and weighed == F(3005, 2)
    # the handbook's stated results (from memory): 1,331.5 lb, 66,698 lb-in, CG +50.09 in
    assert empty == F(2663, 2) and empty_moment == 66698
    assert round(float(empty_moment / empty), 2) == 50.09


def test_handbook_example_in_pounds_and_inches():
    net, weighed, moment, empty, empty_moment, side = _handbook()
    xyz = np.array([[a, y, 0.0] for a, y in zip(ARMS, SIDE)])
    res = reduce_weighing(xyz, [float(r) for r in READ], [float(t) for t in TARE],
                          on_board=[(177.0, (95.0, 0.0, 20.0))], missing=[(6.0, (98.0, 0.0, 20.0))])
    np.testing.assert_allclose(res.net, [float(n) for n in net], rtol=1e-15)
    assert res.weighed_mass == pytest.approx(float(weighed), rel=1e-15)
    assert res.weighed_cg[0] == pytest.approx(float(moment / weighed), rel=1e-14)
    assert res.weighed_cg[1] == pytest.approx(float(side / weighed), rel=1e-14)
    assert math.isnan(res.weighed_cg[2])  # a level weighing does not find the vertical CG
    assert res.empty_mass == pytest.approx(1331.5, rel=1e-15)
    assert res.empty_mass * res.empty_cg[0] == pytest.approx(66698.0, rel=1e-14)
    assert res.empty_cg[0] == pytest.approx(float(F(66698) / F(2663, 2)), rel=1e-14)
    assert res.empty_cg[1] == pytest.approx(float(side / empty), rel=1e-14)  # fuel on the centre line


def _table():
    return {
        "replaces": "empty-vehicle",
        "date": "2026-03-02",
        "point": [
            {"name": "left main", "at": [70, -45, 0], "reading": 650, "tare": 5},
            {"name": "right main", "at": [70, 45, 0], "reading": "640 lb", "tare": 5},
            {"name": "nose", "at": [-30, 0, 0], "reading": 225, "tare": "2.5 lb"},
        ],
        "on_board": [{"name": "full fuel", "volume": "30 gal", "density": "5.9 lb/gal",
                      "at": [95, 0, 20]}],
        "missing": [{"name": "unusable fuel", "mass": 6, "at": [98, 0, 20]}],
    }


def _ledger():
    items = (Item("empty-vehicle", 1300 * LB, (50 * IN, 0.0, 30 * IN), maturity="estimated", growth=0.1),
             Item("pilot", 170 * LB, (60 * IN, 0.0, 35 * IN), variable=True),
             Item("tank", 30 * GAL * 5.9 * LB / GAL, (95 * IN, 0.0, 20 * IN), variable=True,
                  density=5.9 * LB / GAL))
    return Ledger(items=items, units=FileUnits(mass="lb", length="in"), frame=Frame())


def test_handbook_example_from_table_si():
    ledger = _ledger()
    inputs = parse_weighing(_table(), ledger.units, ledger)
    res = inputs.reduce()
    # SI: 1,331.5 lb and 66,698 lb-in by NIST SP 811 factors (exact)
    assert res.empty_mass == pytest.approx(1331.5 * LB, rel=1e-13)
    assert res.empty_cg[0] == pytest.approx(float(F(66698) / F(2663, 2)) * IN, rel=1e-13)
    assert inputs.names == ("left main", "right main", "nose")
    assert inputs.on_board[0].mass == pytest.approx(177 * LB, rel=1e-13)  # 30 gal x 5.9 lb/gal
    new = replaced_item(ledger, inputs, res)
    assert new.id == "empty-vehicle" and new.mass == res.empty_mass
    assert new.cg[0] == res.empty_cg[0] and new.cg[2] == 30 * IN  # vertical kept: not weighed
    assert new.maturity == "measured" and new.growth is None


def test_on_board_by_item_id_and_force_readings():
    ledger = _ledger()
    table = _table()
    # the tank by id with its own density and CG; a load-cell reading in newtons
    table["on_board"] = [{"item": "tank", "volume": "30 gal"}]
    table["point"][2]["reading"] = f"{225 * LB * 9.80665!r} N"  # 225 lb x g_n (NIST SP 811)
    table["vertical_cg"] = 33
    res = parse_weighing(table, ledger.units, ledger).reduce()
    assert res.empty_mass == pytest.approx(1331.5 * LB, rel=1e-13)
    # fuel at +95, z = 20 in: empty z = (W 33 - 177 x 20 + 6 x 20) / 1331.5 (moment balance)
    assert res.empty_cg[2] == pytest.approx((1502.5 * 33 - 177 * 20 + 6 * 20) / 1331.5 * IN, rel=1e-12)
    table["on_board"] = ["pilot"]  # a bare id: its full mass at its CG
    table["missing"] = []
    res = parse_weighing(table, ledger.units, ledger).reduce()
    assert res.empty_mass == pytest.approx((1502.5 - 170) * LB, rel=1e-13)


@pytest.mark.parametrize("change, subject, field", [
    (lambda t: t["point"][0].update(reading=4), "weighing point 'left main'", "tare"),
    (lambda t: t["point"][0].update(tare=-1), "weighing point 'left main'", "tare"),
    (lambda t: t["point"][1].pop("tare"), "weighing point 'right main'", "tare"),
    (lambda t: t["point"][1].update(tar=5), "weighing point 'right main'", "tar"),
    (lambda t: t["point"][2].update(at=[1, 2]), "weighing point 'nose'", "at"),
    (lambda t: t["point"][2].update(reading="225 in"), "weighing point 'nose'", "reading"),
    (lambda t: t.update(replaces="nobody"), "weighing", "replaces"),
    (lambda t: t.update(replaces="pilot"), "weighing", "replaces"),
    (lambda t: t.update(misssing=[]), "weighing", "misssing"),
    (lambda t: t.update(on_board=["ghost"]), "weighing on_board #1", "item"),
    (lambda t: t.update(on_board=[{"name": "fuel", "volume": 30, "density": "6 lb/gal",
                                   "at": [0, 0, 0]}]), "weighing on_board 'fuel'", "volume"),
    (lambda t: t.update(on_board=[{"name": "fuel", "volume": "30 gal", "at": [0, 0, 0]}]),
     "weighing on_board 'fuel'", "density"),
    (lambda t: t.update(missing=[{"name": "radio", "mass": 2}]), "weighing missing 'radio'", "at"),
    (lambda t: t.update(on_board=[{"name": "ballast", "mass": 2000, "at": [0, 0, 0]}]),
     "weighing", "on_board"),
])
def test_bad_weighing_input_names_subject_and_field(change, subject, field):
    ledger = _ledger()
    table = _table()
    change(table)
    with pytest.raises(SteelyardError) as e:
        parse_weighing(table, ledger.units, ledger).reduce()
    assert (e.value.subject, e.value.field) == (subject, field)
    assert "\n" not in str(e.value)


def test_zero_total_and_bad_shapes():
    with pytest.raises(SteelyardError, match="zero"):
        reduce_weighing(np.zeros((2, 3)), [5.0, 5.0], [5.0, 5.0])
    with pytest.raises(SteelyardError):
        reduce_weighing(np.zeros((2, 3)), [5.0, 5.0, 1.0], [0.0, 0.0])
    with pytest.raises(SteelyardError):
        reduce_weighing(np.zeros((1, 3)), [5.0], [0.0], on_board=[(-1.0, (0, 0, 0))])
    with pytest.raises(SteelyardError):
        reduce_weighing(np.zeros((1, 3)), [float("nan")], [0.0])
