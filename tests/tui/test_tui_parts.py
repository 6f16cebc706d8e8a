"""The editor's pure parts: form parsing, row order, literal text, ledger edits.

Oracles: exact NIST SP 811 factors (1 in = 0.0254 m, 1 ft = 0.3048 m,
1 lb = 0.45359237 kg), handbook closed forms for solids, and plain-Python
re-implementations of the table's ordering rules.
"""

from __future__ import annotations

from fractions import Fraction

import numpy as np
import pytest

from steelyard.core.errors import SteelyardError
from steelyard.core.physics.groups import subtotals
from steelyard.core.document.model import FileUnits, Item, Ledger, Loadout
from steelyard.io.ledger.file import open_ledger
from steelyard.tui.state.edits import add_item, delete_item, duplicate_item, move_item, replace_item
from steelyard.tui.state.form_values import GIVEN_INERTIA, initial_fields, item_from_fields, quantity
from steelyard.tui.state.rows import LedgerIndex, RowSpec, build_rows, leaf_path
from steelyard.tui.text import clean
from support.paths import TRAINER

US = Ledger(units=FileUnits("lb", "in", "lb*in**2"))


def form_refusal(fields: dict, ledger: Ledger) -> SteelyardError:
    """The error the item form's fields are refused with (a new item in `ledger`)."""
    with pytest.raises(SteelyardError) as err:
        item_from_fields(fields, None, ledger)
    return err.value


def test_field_values_take_units_and_bare_numbers_are_file_units():
    # 3 ft 2 in = 38 in = 0.9652 m exactly (NIST SP 811: 1 ft = 0.3048 m, 1 in = 0.0254 m)
    assert quantity("3 ft 2 in", "length", "in", "x")[0] == pytest.approx(float(38 * Fraction("0.0254")),
                                                                        rel=1e-15)
    assert quantity("142", "length", "in", "x") == (142 * 0.0254, None)
    value, unit = quantity("2.3 lb", "mass", "kg", "mass")
    assert value == pytest.approx(float(Fraction("2.3") * Fraction("0.45359237")), rel=1e-15)
    assert unit == "lb"  # kept, so the file says "2.3 lb" again
    with pytest.raises(SteelyardError) as err:
        quantity("12 parsecs", "mass", "kg", "mass")
    assert err.value.field == "mass"


def test_untouched_fields_keep_their_exact_values():
    ledger = open_ledger(TRAINER).ledger
    item = ledger.item("wing-carry-through")
    fields = initial_fields(item, ledger.units)
    again = item_from_fields(dict(fields), item, ledger)
    assert again == item  # nothing typed: the very same values, bit for bit
    fields["x"] = "127"
    moved = item_from_fields(fields, item, ledger)
    assert moved.cg[0] == 127 * 0.0254 and moved.cg[1:] == item.cg[1:] and moved.shape == item.shape


def test_impossible_inertia_is_refused_with_its_field():
    # diag(1, 3, 5) is positive definite yet no body has it: 5 > 1 + 3 (REFERENCES.md, realisability)
    fields = initial_fields(None, US.units) | {"id": "odd", "mass": "1", "x": "0", "y": "0", "z": "0",
                                               "kind": GIVEN_INERTIA, "i.xx": "1", "i.yy": "3", "i.zz": "5"}
    err = form_refusal(fields, US)
    assert err.field == "i.zz" and "not physically possible" in err.message


def test_shape_from_the_form_gives_the_handbook_inertia():
    # solid cylinder about its axis: I = ½ m r² (engineering handbook closed form)
    fields = initial_fields(None, US.units) | {"id": "can", "mass": "10 kg", "x": "0", "y": "0", "z": "0",
                                               "kind": "cylinder", "axis": "z", "dim.radius": "0.1 m",
                                               "dim.length": "0.5 m"}
    item = item_from_fields(fields, None, US)
    t = item.own_tensor()
    assert t[2, 2] == pytest.approx(0.5 * 10 * 0.1 ** 2, rel=1e-12)
    assert t[0, 0] == pytest.approx(10 * (3 * 0.1 ** 2 + 0.5 ** 2) / 12, rel=1e-12)
    fields["dim.radius"] = "-1"
    assert form_refusal(fields, US).field == "dim.radius"


def test_duplicate_id_and_missing_fields_are_named():
    ledger = open_ledger(TRAINER).ledger
    fields = initial_fields(None, ledger.units) | {"id": "wing-l", "mass": "1", "x": "0", "y": "0", "z": "0"}
    assert form_refusal(fields, ledger).field == "id"
    fields["id"] = "new"
    fields["z"] = ""
    assert form_refusal(fields, ledger).field == "z"


def test_edits_keep_columns_equal_to_a_fresh_build():
    ledger = open_ledger(TRAINER).ledger
    new = add_item(ledger, Item("radio-2", 1.0, (3.0, 0.0, 0.3)))
    new, copy = duplicate_item(new, "wing-l")
    new = move_item(new, "radio-2", "avionics/panel")
    new = replace_item(new, "pilot", ledger.item("pilot").evolve(id="captain", mass=99.0))
    new = delete_item(new, "elt")
    fresh = Ledger(new.items, new.units, new.frame, new.loadouts, new.envelopes)
    for field in ("unit_mass", "quantity", "cg", "own", "variable"):
        assert np.array_equal(getattr(new.arrays, field), getattr(fresh.arrays, field)), field
    assert copy.id == "wing-l-copy" and new.item("radio-2").group == "avionics/panel"
    # the renamed variable item is renamed in every loadout that sets it
    assert all("pilot" not in lo.set for lo in new.loadouts)
    assert any("captain" in lo.set for lo in new.loadouts)


def test_deleting_a_variable_item_drops_it_from_loadouts():
    ledger = open_ledger(TRAINER).ledger
    assert any("baggage" in lo.set for lo in ledger.loadouts)
    new = delete_item(ledger, "baggage")
    assert all("baggage" not in lo.set for lo in new.loadouts)
    assert isinstance(new.loadouts[0], Loadout)


def _oracle_rows(items, groups, spec, mass):
    """Plain-Python statement of the table's order: tree order of groups, items of a group under its
    header sorted by the key, folded groups hide everything below, a filter hides empty groups."""
    out = []
    q = spec.filter.lower()
    keep = [not q or q in f"{it.id}\n{it.name}\n{it.group}".lower() for it in items]

    def under(path, g):
        return g == path or g.startswith(path + "/")

    for g in groups:
        parts = g.path.split("/")
        if any("/".join(parts[:k]) in spec.folded for k in range(1, len(parts))):
            continue
        members = [i for i, it in enumerate(items) if under(g.path, leaf_path(it.group)) and keep[i]]
        if q and not members:
            continue
        out.append(-(groups.index(g) + 1))
        if g.path in spec.folded:
            continue
        own = [i for i in members if leaf_path(items[i].group) == g.path]
        key = (lambda i: -mass[i]) if spec.descending else (lambda i: mass[i])
        out.extend(sorted(own, key=key) if spec.sort == "mass" else own)
    return out


@pytest.mark.parametrize("spec", [RowSpec(), RowSpec(sort="mass"), RowSpec(sort="mass", descending=True),
                                  RowSpec(filter="wing"), RowSpec(folded=frozenset({"structure/wing"})),
                                  RowSpec(folded=frozenset({"structure", "power"}), filter="a")])
def test_row_order_matches_the_rules(spec):
    ledger = open_ledger(TRAINER).ledger
    a = ledger.arrays
    mass = a.unit_mass * a.quantity
    groups = subtotals([it.group for it in ledger.items], mass, a.cg, a.own)
    rows = build_rows(LedgerIndex(ledger.items, groups), spec, mass, a.cg)
    assert rows.tolist() == _oracle_rows(ledger.items, groups, spec, mass)


def test_flat_rows_sort_by_text_and_filter():
    ledger = open_ledger(TRAINER).ledger
    a = ledger.arrays
    index = LedgerIndex(ledger.items, None)
    rows = build_rows(index, RowSpec(grouped=False, sort="id"), a.unit_mass, a.cg)
    assert [ledger.items[i].id for i in rows] == sorted((it.id for it in ledger.items), key=str.lower)
    rows = build_rows(index, RowSpec(grouped=False, filter="FUEL"), a.unit_mass, a.cg)
    assert {ledger.items[i].id for i in rows} == {it.id for it in ledger.items
                                                  if "fuel" in f"{it.id} {it.name} {it.group}".lower()}


def test_control_characters_become_visible_and_markup_stays_text():
    assert clean("\x1b[2J") == "␛[2J"
    assert clean("a\x07b\x7fc\x9bd") == "a␇b␡c\ufffdd"
    assert clean("\u202eevil") == "\ufffdevil"  # a right-to-left override cannot reorder the line
    assert clean("[b]x[/b]") == "[b]x[/b]"
