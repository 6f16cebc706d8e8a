"""The journal of a tree: records are about the file as written (own items, [[assembly]] tables),
written and read back as lines, and replayed into the same flat ledger; a placed item is never
recorded as the file's own. Placed positions are checked by hand (exact fractions, the contract's
order p_parent = at + R·M·A·p, DESIGN "Contract v1.1: assemblies")."""

from __future__ import annotations

from fractions import Fraction as F

import numpy as np
import pytest

import steelyard.io.durability.journal as J
from steelyard.core.assembly.edit import add_assembly, remove_assembly, with_assembly, with_placed_file
from steelyard.core.errors import SteelyardError
from steelyard.io.ledger.file import open_ledger
from steelyard.tui.state.edits import delete_item, replace_item
from support.ledgers import write_ledger

PARENT = """steelyard = 1
[units]
mass = "kg"
length = "m"

[[item]]
id = "frame"
mass = 10.0
cg = [1.0, 0.0, 0.5]

[[item]]
id = "seat"
mass = 2.0
cg = [1.5, 0.0, 0.4]

[[assembly]]
id = "wing-r"
file = "parts/wing.toml"
at = [1.2, 0.5, 0.8]
"""

WING = """steelyard = 1
[units]
mass = "lb"
length = "in"

[[item]]
id = "spar"
mass = 11.0
cg = [10.0, 20.0, 0.0]

[[item]]
id = "skin"
mass = 4.0
cg = [12.0, 30.0, 1.0]
"""

LB, IN = F("0.45359237"), F("0.0254")  # NIST SP 811, Appendix B: exact by definition


@pytest.fixture
def tree(tmp_path):
    (tmp_path / "parts").mkdir()
    write_ledger(tmp_path / "parts", WING, "wing.toml")
    path = write_ledger(tmp_path, PARENT)
    loaded = open_ledger(path)
    wing = open_ledger(tmp_path / "parts" / "wing.toml")
    return path, loaded.ledger, wing


def _through_a_file(rec: dict) -> dict:
    """The record as the journal writes and reads it (one JSON line with its CRC)."""
    back = J.decode_line(J.encode_line(dict(rec, seq=1))[:-1])
    assert back is not None
    return back


def _same(a, b) -> None:
    assert [it.id for it in a.items] == [it.id for it in b.items]
    assert [it.source for it in a.items] == [it.source for it in b.items]
    assert tuple(a.assemblies) == tuple(b.assemblies)
    assert [(q.id, q.file, q.sha256, q.start, q.stop, q.depth) for q in a.placed] == \
           [(q.id, q.file, q.sha256, q.start, q.stop, q.depth) for q in b.placed]
    for name in ("unit_mass", "quantity", "cg", "own"):
        assert np.array_equal(getattr(a.arrays, name), getattr(b.arrays, name)), name


def _children(wing):
    return lambda file: (wing.ledger, wing.sha256)


def test_adding_a_placement_is_one_assemblies_record_that_replays(tree):
    path, old, wing = tree
    table = {"id": "wing-l", "file": "parts/wing.toml", "at": [1.2, -0.5, 0.8], "mirror": "y"}
    new = add_assembly(old, table, wing.ledger, "parts/wing.toml", wing.sha256)
    rec = _through_a_file(J.edit_record(old, new))
    assert rec["op"] == "assemblies" and rec["assemblies"][-1] == table
    replayed = J.replay(old, [rec])  # the file is placed already: its ledger is reused, nothing read
    _same(replayed, new)
    # by hand: the left spar at at + M·p, M negating y; lb and in to kg and m exactly
    spar = replayed.item("wing-l/spar")
    assert spar.mass == pytest.approx(float(11 * LB), rel=1e-15)
    expected = (F("1.2") + 10 * IN, F("-0.5") - 20 * IN, F("0.8") + 0 * IN)
    assert spar.cg == pytest.approx(tuple(float(x) for x in expected), abs=1e-15)


def test_move_and_remove_replay_and_a_new_file_is_read_through_children(tree, tmp_path):
    path, old, wing = tree
    moved = with_assembly(old, 0, {"id": "wing-r", "file": "parts/wing.toml", "at": [1.3, 0.5, 0.8],
                                   "rotate": [["z", 90.0]]}, wing.ledger, "parts/wing.toml", wing.sha256)
    gone = remove_assembly(moved, "wing-r")
    recs = [_through_a_file(J.edit_record(old, moved)), _through_a_file(J.edit_record(moved, gone))]
    _same(J.replay(old, recs[:1]), moved)
    _same(J.replay(old, recs), gone)
    # put back from nothing: the ledger places no file any more, so the file must be read
    back = add_assembly(gone, dict(old.assemblies[0]), wing.ledger, "parts/wing.toml", wing.sha256)
    rec = _through_a_file(J.edit_record(gone, back))
    with pytest.raises(SteelyardError, match="does not place yet"):
        J.replay(gone, [rec])
    _same(J.replay(gone, [rec], children=_children(wing)), back)
    # z turned 90°: (x, y) -> (-y, x) (right-hand rule, common practice); spar at (10, 20) in
    spar = J.replay(old, recs[:1]).item("wing-r/spar")
    assert spar.cg == pytest.approx((float(F("1.3") - 20 * IN), float(F("0.5") + 10 * IN), 0.8), abs=1e-15)


def test_own_item_edits_of_a_tree_name_no_placed_item(tree):
    path, old, wing = tree
    seat = old.item("seat")
    edited = replace_item(old, "seat", seat.evolve(mass=2.5))
    deleted = delete_item(edited, "frame")  # the placed rows after it move up one row
    assert [(q.start, q.stop) for q in deleted.placed] == [(1, 3)]
    recs = [_through_a_file(J.edit_record(old, edited)), _through_a_file(J.edit_record(edited, deleted))]
    assert "wing-r" not in repr(recs)
    _same(J.replay(old, recs), deleted)
    # the placed file saved meanwhile: a replay onto the re-placed ledger keeps the new rows
    heavier = open_ledger(path.parent / "parts" / "wing.toml").ledger
    heavier = replace_item(heavier, "spar", heavier.item("spar").evolve(mass=float(12 * LB)))
    fresh = with_placed_file(old, "parts/wing.toml", heavier, "f" * 64)
    assert J.replay(fresh, recs).item("wing-r/spar").mass == pytest.approx(float(12 * LB), rel=1e-15)
