"""The set-up forms' checks against the strict reader: what one refuses, the other refuses, naming the same key.

Each case is a table a user might type; the reference is the strict reader
given a file holding that table (the file format as docs/format.md and
docs/limits.md describe it). A table the form accepts is written by the one
writer and read back equal by the standard library's tomllib, and a journal
record of the edit replays to the same ledger.
"""

from __future__ import annotations

import tomllib

import pytest

from steelyard.core.errors import SteelyardError
from steelyard.io.durability.journal_records import edit_record, replay
from steelyard.io.ledger.write import ledger_to_toml
from steelyard.io.ledger.toml_write import tables
from steelyard.tui.state.setup_fields import FIELDS, parse, parse_categories, parse_points
from steelyard.tui.state.setup_tables import copied, entries, with_entry
from support.ledgers import ledger_from_text

BASE = """
steelyard = 1
[units]
mass = "lb"
length = "in"
[[item]]
id = "frame"
mass = 100
cg = [50, 0, 10]
[[item]]
id = "fuel"
mass = 60
cg = [55, 0, 8]
variable = true
[[loadout]]
name = "full"
[loadout.set]
fuel = 1.0
"""

#: (kind, table as typed, the key both must name); each is refused by a file reader too
BAD = [
    ("limit", {"name": "m", "max_mass": "heavy"}, "max_mass"),
    ("limit", {"name": "m", "max_mass": 10, "axis": "x"}, "axis"),
    ("limit", {"name": "m", "loadouts": ["nope"], "max_mass": 10}, "loadouts"),
    ("limit", {"name": "m", "max_mas": 10}, "max_mas"),
    ("envelope", {"name": "e", "axis": "q", "points": [[40, 100], [60, 100], [60, 200]]}, "axis"),
    ("envelope", {"name": "e", "axis": "x", "points": [[40, 100], [60, 200], [40, 200], [60, 100]]}, "points"),
    ("allocation", {"group": "a", "mass": -3}, "mass"),
    ("mac", {"lemac": 40}, "length"),
    ("fuel", {"items": ["frame"]}, "items"),
    ("growth", {"layout": 1.5}, "layout"),
    ("loadout", {"name": "x", "set": {"frame": 1.0}}, "set.frame"),
    ("loadout", {"name": "full"}, "name"),  # a second loadout of the same name
]


def _file_with(kind: str, table: dict) -> str:
    """BASE plus the table, written the way a user would write it in the file."""
    data = {kind: [table]} if kind in ("limit", "envelope", "allocation", "loadout") else {kind: table}
    return BASE + "\n" + tables(data)


@pytest.mark.parametrize("kind, table, key", BAD, ids=[f"{k}-{f}" for k, _, f in BAD])
def test_form_refuses_what_the_reader_refuses_naming_the_same_key(kind, table, key):
    ledger = ledger_from_text(BASE)
    with pytest.raises(SteelyardError) as file_error:  # the reference: the strict reader on a file
        ledger_from_text(_file_with(kind, table))
    with pytest.raises(SteelyardError) as form_error:
        with_entry(ledger, kind, None, table)
    assert key in (file_error.value.field or "") + str(file_error.value)
    assert form_error.value.field == file_error.value.field
    assert form_error.value.message == file_error.value.message


GOOD = [
    ("limit", {"name": "mtow", "conditions": ["takeoff"], "max_mass": 170}),
    ("limit", {"name": "yaw", "max_inertia": {"zz": 9000.5}}),
    ("limit", {"name": "lateral", "max_cg_offset": 0.5, "axis": "x", "through": [0, 9]}),
    ("envelope", {"name": "e", "axis": "x", "points": [[40, 100], [60, 100], [60, 200], [40, 200]],
                  "loadouts": ["full"]}),
    ("allocation", {"group": "", "mass": "80 kg"}),
    ("mac", {"lemac": 40, "length": 12.5}),
    ("fuel", {"items": ["fuel"]}),
    ("growth", {"layout": 0.2, "own-class": "12 %"}),
    ("loadout", {"name": "half", "base": "full", "set": {"fuel": "30 lb"}}),
]


@pytest.mark.parametrize("kind, table", GOOD, ids=[k for k, _ in GOOD])
def test_accepted_table_is_written_and_read_back_as_typed(kind, table):
    ledger = ledger_from_text(BASE)
    new = with_entry(ledger, kind, None, table)
    text = ledger_to_toml(new)
    data = tomllib.loads(text)  # the standard library's reading of what the writer wrote
    got = data[kind][-1] if isinstance(data[kind], list) else data[kind]
    assert got == table
    again = ledger_from_text(text)  # the strict reader takes it
    assert entries(again, kind)[-1] == table
    record = edit_record(ledger, new)
    assert entries(replay(ledger, [record]), kind) == entries(new, kind)


def test_copy_takes_a_free_name_and_delete_of_a_named_loadout_is_refused():
    ledger = with_entry(ledger_from_text(BASE), "limit", None,
                        {"name": "only-full", "loadouts": ["full"], "max_mass": 170})
    new, name = copied(ledger, "loadout", 0)
    assert name == "full-copy" and [lo.name for lo in new.loadouts] == ["full", "full-copy"]
    with pytest.raises(SteelyardError) as exc:
        with_entry(ledger, "loadout", 0, None)  # the limit's scope names it, as a file would be refused
    assert exc.value.field == "loadouts"


def test_typed_text_becomes_the_value_a_file_holds():
    # TOML 1.0 values (toml.io): a bare number stays a number, anything else typed is text or a list
    f = {x.key: x for x in FIELDS["limit"]}
    assert parse(f["max_mass"], "25") == 25
    assert parse(f["max_mass"], "25 kg") == "25 kg"
    assert parse(f["loadouts"], "full, half") == ["full", "half"]
    assert parse(f["max_inertia"], "xx = 1.5, zz = 3") == {"xx": 1.5, "zz": 3}
    assert parse(f["through"], "0, 9.5") == [0, 9.5]
    assert parse(f["name"], "") is None
    assert parse_points("40, 100\n\n60, 100\n") == [[40, 100], [60, 100]]
    assert parse_categories('layout = 0.2\nown-class = "12 %"') == {"layout": 0.2, "own-class": "12 %"}
