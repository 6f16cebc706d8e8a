"""Growth allowance: maturity table, basic vs predicted roll-up, allocations."""

from fractions import Fraction as F

import numpy as np
import pytest

from steelyard.core.errors import SteelyardError
from steelyard.core.control.growth import (
    CATEGORIES, DEFAULT_GROWTH, allocation_margins, basic_and_predicted, growth_fractions,
)
from steelyard.core.document.model import FileUnits, Item, Ledger


def _ledger(tables=None):
    items = (
        Item("fc", 10.0, (1.0, 0.0, 0.0), group="avionics", maturity="estimated"),
        Item("radio", 20.0, (2.0, 0.0, 1.0), group="avionics/radio", maturity="layout"),
        Item("harness", 5.0, (4.0, 1.0, 0.0), group="power",
             maturity="released", growth=0.12),
        Item("frame", 8.0, (0.0, 0.0, 0.0), group="structure"),
        Item("cell", 2.0, (3.0, 0.0, 0.0), group="power", quantity=3, maturity="measured"),
    )
    return Ledger(items=items, units=FileUnits(), **(tables or {"growth": {"layout": 0.20}}))


def _rows(ledger):
    a = ledger.arrays
    return a.unit_mass * a.quantity, a.cg


def test_default_table_inside_recalled_ranges():
    # ANSI/AIAA S-120A typical MGA by maturity (from memory, REFERENCES.md):
    # estimated 15-50 %, layout 10-25 %, pre-release 5-20 %, released 3-10 %,
    # existing 2-3 %, measured 0 %.
    recalled = {"estimated": (0.15, 0.50), "layout": (0.10, 0.25), "preliminary": (0.05, 0.20),
                "released": (0.03, 0.10), "existing": (0.02, 0.03), "measured": (0.0, 0.0)}
    assert set(DEFAULT_GROWTH) == set(CATEGORIES) == set(recalled)
    for key, (lo, hi) in recalled.items():
        assert lo <= DEFAULT_GROWTH[key] <= hi, key
    # Allowance falls as the design matures (the concept, ANSI/AIAA S-120A).
    values = [DEFAULT_GROWTH[c] for c in CATEGORIES]
    assert values == sorted(values, reverse=True)


def test_fractions_override_and_explicit():
    f = growth_fractions(_ledger())
    # by hand: estimated default, layout from the ledger's [growth], explicit 0.12,
    # unclassified 0, measured 0
    assert f.tolist() == [DEFAULT_GROWTH["estimated"], 0.20, 0.12, 0.0, 0.0]


def test_fraction_as_percent_string():
    ledger = Ledger(items=(Item("a", 1.0, (0, 0, 0), growth="12 %"),))
    # 12 % = 0.12 (definition of per cent)
    assert growth_fractions(ledger)[0] == pytest.approx(0.12, rel=1e-15)


def test_basic_and_predicted_hand_calculation():
    ledger = _ledger()
    mass, cg = _rows(ledger)
    f = growth_fractions(ledger)
    basic, basic_cg, pred, pred_cg = basic_and_predicted(mass, cg, f)
    # Hand calculation, exact fractions: predicted = basic x (1 + growth), growth at the item's CG.
    g_est = F(DEFAULT_GROWTH["estimated"]).limit_denominator(1000)
    rows = [  # (basic mass, cg, growth)
        (F(10), (1, 0, 0), g_est),
        (F(20), (2, 0, 1), F(1, 5)),
        (F(5), (4, 1, 0), F(12, 100)),
        (F(8), (0, 0, 0), F(0)),
        (F(6), (3, 0, 0), F(0)),
    ]
    m_b = sum(m for m, _, _ in rows)
    m_p = sum(m * (1 + g) for m, _, g in rows)
    cg_b = [sum(m * r[k] for m, r, _ in rows) / m_b for k in range(3)]
    cg_p = [sum(m * (1 + g) * r[k] for m, r, g in rows) / m_p for k in range(3)]
    assert m_b == 49 and m_p == F(561, 10)  # 12.5 + 24 + 5.6 + 8 + 6
    assert basic == pytest.approx(float(m_b), rel=1e-15)
    assert pred == pytest.approx(float(m_p), rel=1e-15)
    np.testing.assert_allclose(basic_cg, [float(c) for c in cg_b], rtol=1e-14)
    np.testing.assert_allclose(pred_cg, [float(c) for c in cg_p], rtol=1e-14)


def test_zero_mass_has_no_cg():
    basic, cg, pred, pcg = basic_and_predicted(np.zeros(2), np.ones((2, 3)), np.zeros(2))
    assert basic == pred == 0.0 and np.isnan(cg).all() and np.isnan(pcg).all()


def test_far_datum_keeps_digits():
    # exact arithmetic: two 1 kg items 1 mm apart, 30 km from the datum; CG midway
    cg = np.array([[30000.0, 0, 0], [30000.001, 0, 0]])
    _, basic_cg, _, _ = basic_and_predicted(np.ones(2), cg, np.zeros(2))
    assert basic_cg[0] == pytest.approx(30000.0005, abs=1e-9)


def test_allocation_margins_hand_calculation():
    tables = {"growth": {"layout": 0.20}, "allocations": [
        {"group": "avionics", "mass": "40 kg"},   # includes avionics/radio
        {"group": "power", "mass": 11.0},          # bare number: file units (kg)
        {"group": "", "mass": "60 kg"},            # the whole vehicle
    ]}
    ledger = _ledger(tables)
    mass, _ = _rows(ledger)
    out = allocation_margins(ledger, mass, growth_fractions(ledger))
    g = DEFAULT_GROWTH["estimated"]
    # by hand: avionics basic 10 + 20, predicted 10(1+g) + 20 x 1.2
    assert [o["group"] for o in out] == ["avionics", "power", ""]
    assert out[0]["basic_kg"] == pytest.approx(30.0)
    assert out[0]["predicted_kg"] == pytest.approx(10 * (1 + g) + 24.0)
    assert out[0]["margin_kg"] == pytest.approx(40.0 - (10 * (1 + g) + 24.0))
    # power: 5 x 1.12 + 6 = 11.6 predicted, over its 11 kg budget
    assert out[1]["predicted_kg"] == pytest.approx(11.6)
    assert out[1]["margin_kg"] == pytest.approx(-0.6)
    assert out[2]["basic_kg"] == pytest.approx(49.0)
    assert out[2]["allocation_kg"] == 60.0


def test_allocation_in_pounds():
    ledger = Ledger(items=(Item("a", 1.0, (0, 0, 0), group="x"),),
                    allocations=({"group": "x", "mass": "10 lb"},))
    out = allocation_margins(ledger, np.ones(1), np.zeros(1))
    assert out[0]["allocation_kg"] == pytest.approx(10 * 0.45359237, rel=1e-15)  # NIST SP 811


def test_group_prefix_is_a_path_not_a_string_prefix():
    # common practice: "avionics" does not include "avionics-bay"; it does include "avionics/x"
    items = (Item("a", 1.0, (0, 0, 0), group="avionics-bay"), Item("b", 2.0, (0, 0, 0), group="avionics/x"))
    ledger = Ledger(items=items, allocations=({"group": "avionics", "mass": 5},))
    out = allocation_margins(ledger, np.array([1.0, 2.0]), np.zeros(2))
    assert out[0]["basic_kg"] == 2.0


@pytest.mark.parametrize("extra, field", [
    ({"maturity": "rough"}, "maturity"),
    ({"maturity": 3}, "maturity"),
    ({"growth": 1.5}, "growth"),
    ({"growth": -0.1}, "growth"),
    ({"growth": "lots"}, "growth"),
    ({"growth": True}, "growth"),
    ({"maturity": "bogus", "growth": 0.1}, "maturity"),
])
def test_bad_item_keys_name_item_and_field(extra, field):
    ledger = Ledger(items=(Item("ok", 1.0, (0, 0, 0)), Item("pump-2", 1.0, (0, 0, 0), **extra)))
    with pytest.raises(SteelyardError) as e:
        growth_fractions(ledger)
    assert e.value.subject == "item 'pump-2'" and e.value.field == field
    assert "pump-2" in str(e.value) and field in str(e.value) and "\n" not in str(e.value)


def test_bad_growth_table_and_allocation():
    bad = Ledger(items=(Item("a", 1.0, (0, 0, 0)),), growth={"layout": 2.0})
    with pytest.raises(SteelyardError, match="layout"):
        growth_fractions(bad)
    for alloc, field in [({"group": "x"}, "mass"), ({"group": "x", "mass": "-1 kg"}, "mass"),
                         ({"group": "x", "mass": "3 m"}, "mass"), ({"mass": 3}, "group")]:
        ledger = Ledger(items=(Item("a", 1.0, (0, 0, 0)),), allocations=(alloc,))
        with pytest.raises(SteelyardError) as e:
            allocation_margins(ledger, np.ones(1), np.zeros(1))
        assert e.value.field == field and "allocation" in str(e.value)
