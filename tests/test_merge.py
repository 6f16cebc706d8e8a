"""`steelyard merge BASE OURS THEIRS`: three-way merge by item id and field, as a git merge driver.

Each case writes BASE, OURS and THEIRS inline and the merge a person would
make by hand (EXPECTED); result and expectation are both read by the
standard library's tomllib and compared as data, so the test holds whatever
layout the writer keeps. Outside references:
- the merge driver contract and conflict markers: git's documentation
  (gitattributes(5), "Defining a custom merge driver": the result goes to %A,
  exit 0 when clean, non-zero on conflicts; git-merge(1), "How conflicts are
  presented": <<<<<<< / ======= / >>>>>>> lines, seven characters);
- unit factors: NIST SP 811 (Appendix B), 1 lb = 0.45359237 kg exactly;
- a file with markers is not TOML: tomllib refuses it; ours must refuse it
  with its own one line naming the marker's line, counted here by hand.
"""

from __future__ import annotations

import tomllib
from fractions import Fraction as F

import pytest

from steelyard.core.errors import FormatError
from steelyard.io.ledger.file import open_ledger
from support.cli import run_cli
from support.merge_texts import HEAD, ITEMS, data as _data, merge as _merge

LB = F("0.45359237")  # kg, NIST SP 811, exact


def _sections(text: str) -> list[tuple[str, str]]:
    """(ours, theirs) text of each marked conflict, read by hand from the marker lines (git-merge(1))."""
    out, lines, k = [], text.splitlines(keepends=True), 0
    while k < len(lines):
        if lines[k].startswith("<<<<<<< "):
            mid = next(j for j in range(k, len(lines)) if lines[j].rstrip("\n") == "=======")
            end = next(j for j in range(mid, len(lines)) if lines[j].startswith(">>>>>>> "))
            out.append(("".join(lines[k + 1:mid]), "".join(lines[mid + 1:end])))
            k = end
        k += 1
    return out


# --------------------------------------------------------------------------- items by id and field


def test_ours_mass_and_theirs_name_of_one_item_are_both_kept(tmp_path):
    ours = HEAD + ITEMS.replace("mass = 41.5", "mass = 43.0")
    theirs = HEAD + ITEMS.replace('name = "Main battery"', 'name = "Battery pack"')
    expected = HEAD + """
[[item]]
id = "battery"
name = "Battery pack"
mass = 43.0
cg = [3.1, 0.0, 0.42]

[[item]]
id = "radio"
name = "Radio"
mass = 1.2
cg = [2.0, 0.1, 0.5]
"""
    rc, text = _merge(tmp_path, HEAD + ITEMS, ours, theirs)
    assert rc == 0  # gitattributes(5): clean merge exits 0
    assert _data(text) == _data(expected)


def test_the_same_change_on_both_sides_is_no_conflict(tmp_path):
    both = HEAD + ITEMS.replace("mass = 1.2", "mass = 1.4")
    rc, text = _merge(tmp_path, HEAD + ITEMS, both, both.replace("[[item]]\nid = \"radio\"",
                                                                "# radio moved\n[[item]]\nid = \"radio\""))
    assert rc == 0
    assert _data(text)["item"][1]["mass"] == 1.4


def test_the_same_field_changed_differently_is_a_marked_conflict(tmp_path):
    ours = HEAD + ITEMS.replace("mass = 1.2", "mass = 1.4")
    theirs = HEAD + ITEMS.replace("mass = 1.2", "mass = 1.6")
    rc, text = _merge(tmp_path, HEAD + ITEMS, ours, theirs)
    assert rc == 1  # gitattributes(5): non-zero when there are conflicts
    (mine, other), = _sections(text)
    assert _data(mine)["item"] == [{"id": "radio", "name": "Radio", "mass": 1.4, "cg": [2.0, 0.1, 0.5]}]
    assert _data(other)["item"] == [{"id": "radio", "name": "Radio", "mass": 1.6, "cg": [2.0, 0.1, 0.5]}]
    outside = text.split("<<<<<<< ")[0]  # the undisputed battery is merged as usual, before the markers
    assert _data(outside)["item"][0]["mass"] == 41.5


def test_added_on_each_side_both_kept_and_theirs_after_its_neighbour(tmp_path):
    ours = HEAD + ITEMS + '\n[[item]]\nid = "gps"\nmass = 0.3\ncg = [2.1, 0.0, 0.6]\n'
    theirs = HEAD + ITEMS.replace('[[item]]\nid = "radio"',
                                  '[[item]]\nid = "fan"\nmass = 0.2\ncg = [1.0, 0.0, 0.3]\n\n[[item]]\nid = "radio"')
    expected = HEAD + """
[[item]]
id = "battery"
name = "Main battery"
mass = 41.5
cg = [3.1, 0.0, 0.42]

[[item]]
id = "fan"
mass = 0.2
cg = [1.0, 0.0, 0.3]

[[item]]
id = "radio"
name = "Radio"
mass = 1.2
cg = [2.0, 0.1, 0.5]

[[item]]
id = "gps"
mass = 0.3
cg = [2.1, 0.0, 0.6]
"""
    rc, text = _merge(tmp_path, HEAD + ITEMS, ours, theirs)
    assert rc == 0
    assert _data(text) == _data(expected)


def test_added_on_both_sides_alike_is_one_item_and_differently_a_conflict(tmp_path):
    gps = '\n[[item]]\nid = "gps"\nmass = {m}\ncg = [2.1, 0.0, 0.6]\n'
    rc, text = _merge(tmp_path, HEAD + ITEMS, HEAD + ITEMS + gps.format(m="0.3"), HEAD + ITEMS + gps.format(m="0.3"))
    assert rc == 0 and [it["id"] for it in _data(text)["item"]] == ["battery", "radio", "gps"]
    rc, text = _merge(tmp_path, HEAD + ITEMS, HEAD + ITEMS + gps.format(m="0.3"), HEAD + ITEMS + gps.format(m="0.35"))
    assert rc == 1
    (mine, other), = _sections(text)
    assert _data(mine)["item"][0]["mass"] == 0.3 and _data(other)["item"][0]["mass"] == 0.35


def test_removed_on_one_side_and_untouched_on_the_other_is_removed(tmp_path):
    ours = HEAD + ITEMS.split('[[item]]\nid = "radio"')[0]
    theirs = HEAD + ITEMS.replace("mass = 41.5", "mass = 40.0")
    expected = HEAD + '\n[[item]]\nid = "battery"\nname = "Main battery"\nmass = 40.0\ncg = [3.1, 0.0, 0.42]\n'
    rc, text = _merge(tmp_path, HEAD + ITEMS, ours, theirs)
    assert rc == 0
    assert _data(text) == _data(expected)


def test_removed_on_one_side_and_changed_on_the_other_is_a_conflict(tmp_path):
    ours = HEAD + ITEMS.split('[[item]]\nid = "radio"')[0]
    theirs = HEAD + ITEMS.replace("mass = 1.2", "mass = 1.3")
    rc, text = _merge(tmp_path, HEAD + ITEMS, ours, theirs)
    assert rc == 1
    (mine, other), = _sections(text)
    assert mine == ""  # ours removed it: its half is empty
    assert _data(other)["item"][0] == {"id": "radio", "name": "Radio", "mass": 1.3, "cg": [2.0, 0.1, 0.5]}
    rc, text = _merge(tmp_path, HEAD + ITEMS, theirs, ours)  # the other way round
    assert rc == 1
    (mine, other), = _sections(text)
    assert _data(mine)["item"][0]["mass"] == 1.3 and other == ""


def test_without_a_common_ancestor_both_sides_count_as_added(tmp_path):
    """git passes an empty BASE when both branches added the file (gitattributes(5): %O)."""
    gps = '\n[[item]]\nid = "gps"\nmass = 0.3\ncg = [2.1, 0.0, 0.6]\n'
    rc, text = _merge(tmp_path, "", HEAD + ITEMS, HEAD + ITEMS + gps)
    assert rc == 0
    assert _data(text) == _data(HEAD + ITEMS + gps)


def test_a_clean_merge_that_does_not_read_is_written_and_exit_1(tmp_path, capsys):
    base = HEAD + TANKS.replace('pilot = "80 kg"\n', "")
    ours = base.replace('[[item]]\nid = "pilot"\nmass = 120.0\ncg = [2.5, 0.0, 0.9]\nvariable = true\n', "")
    theirs = base.replace("tank = 0.5", 'tank = 0.5\npilot = "80 kg"')
    rc, text = _merge(tmp_path, base, ours, theirs)
    assert rc == 1 and "<<<<<<<" not in text
    assert _data(text)["loadout"][0]["set"] == {"tank": 0.5, "pilot": "80 kg"}  # both sides' work is there
    err = capsys.readouterr().err
    assert "does not read" in err and "pilot" in err


def test_a_value_spelt_with_its_unit_is_no_change(tmp_path):
    ours = HEAD + ITEMS.replace("mass = 41.5", 'mass = "41.5 kg"')  # same meaning, other spelling
    theirs = HEAD + ITEMS.replace("mass = 41.5", "mass = 42.0")
    rc, text = _merge(tmp_path, HEAD + ITEMS, ours, theirs)
    assert rc == 0
    assert _data(text)["item"][0]["mass"] == 42.0


# --------------------------------------------------------------------------- definitions by name

TANKS = """
[[item]]
id = "tank"
mass = 60.0
cg = [2.9, 0.0, 0.7]
variable = true

[[item]]
id = "pilot"
mass = 120.0
cg = [2.5, 0.0, 0.9]
variable = true

[[loadout]]
name = "trip"
[loadout.set]
tank = 0.5
pilot = "80 kg"

[[envelope]]
name = "normal"
axis = "x"
points = [[2.0, 100.0], [2.0, 300.0], [3.5, 300.0], [3.5, 100.0]]

[[limit]]
name = "mtow"
max_mass = 300.0

[[allocation]]
group = ""
mass = 250.0
"""


def test_loadouts_envelopes_limits_and_allocations_merge_by_name_field_by_field(tmp_path):
    base = HEAD + TANKS
    ours = (base.replace("tank = 0.5", "tank = 0.75")
            .replace("[3.5, 300.0], [3.5, 100.0]", "[3.4, 300.0], [3.4, 100.0]")
            .replace("max_mass = 300.0", "max_mass = 310.0")
            .replace("mass = 250.0", "mass = 260.0"))
    theirs = (base.replace('pilot = "80 kg"', 'pilot = "90 kg"')
              .replace('axis = "x"\npoints', 'axis = "x"\nconditions = ["takeoff"]\npoints')
              .replace('name = "mtow"', 'name = "mtow"\nconditions = ["takeoff"]')
              .replace('group = ""', 'group = ""\nuser = { owner = "mass team" }'))
    expected = HEAD + """
[[item]]
id = "tank"
mass = 60.0
cg = [2.9, 0.0, 0.7]
variable = true

[[item]]
id = "pilot"
mass = 120.0
cg = [2.5, 0.0, 0.9]
variable = true

[[loadout]]
name = "trip"
[loadout.set]
tank = 0.75
pilot = "90 kg"

[[envelope]]
name = "normal"
axis = "x"
points = [[2.0, 100.0], [2.0, 300.0], [3.4, 300.0], [3.4, 100.0]]
conditions = ["takeoff"]

[[limit]]
name = "mtow"
max_mass = 310.0
conditions = ["takeoff"]

[[allocation]]
group = ""
mass = 260.0
user = { owner = "mass team" }
"""
    rc, text = _merge(tmp_path, base, ours, theirs)
    assert rc == 0
    assert _data(text) == _data(expected)


@pytest.mark.parametrize("table, mine, other", [
    ("loadout", "tank = 0.75", "tank = 0.25"),
    ("envelope", "[3.4, 300.0], [3.4, 100.0]", "[3.6, 300.0], [3.6, 100.0]"),
    ("limit", "max_mass = 310.0", "max_mass = 320.0"),
    ("allocation", "mass = 260.0", "mass = 270.0"),
])
def test_a_definition_changed_differently_on_both_sides_is_a_conflict(tmp_path, table, mine, other):
    base = HEAD + TANKS
    was = {"loadout": "tank = 0.5", "envelope": "[3.5, 300.0], [3.5, 100.0]", "limit": "max_mass = 300.0",
           "allocation": "mass = 250.0"}[table]
    rc, text = _merge(tmp_path, base, base.replace(was, mine), base.replace(was, other))
    assert rc == 1
    (ours_part, theirs_part), = _sections(text)
    assert list(_data(ours_part)) == [table] and mine in ours_part and other in theirs_part


def test_units_changed_on_one_side_keep_every_number_meaning_the_same(tmp_path):
    """Theirs switches the file to pounds (converting its numbers); ours changes masses in kilograms."""
    base = HEAD + ITEMS + '\n[[limit]]\nname = "mtow"\nmax_mass = 700.0\n'
    ours = base.replace("mass = 1.2", "mass = 1.5").replace("max_mass = 700.0", "max_mass = 720.0")
    theirs = (base.replace('mass = "kg"', 'mass = "lb"')
              .replace("mass = 41.5", 'mass = "41.5 kg"').replace("mass = 1.2", 'mass = "1.2 kg"')
              .replace("max_mass = 700.0", 'max_mass = "700 kg"'))
    rc, text = _merge(tmp_path, base, ours, theirs)
    assert rc == 0
    data = _data(text)
    assert data["units"]["mass"] == "lb"  # only theirs changed [units]: theirs' units
    radio = data["item"][1]
    value = F(radio["mass"]) * LB if not isinstance(radio["mass"], str) else None
    assert value is not None and abs(value - F("1.5")) < F("1e-12")  # 1.5 kg written in lb (NIST SP 811)
    # the limit as ours wrote it, 720 in a file in kg: pinned with its unit, since the file is now in lb
    assert data["limit"][0]["max_mass"] in ("720.0 kg", "720 kg")


def test_units_changed_differently_on_both_sides_is_a_conflict(tmp_path):
    base = HEAD + ITEMS.replace("mass = 41.5", 'mass = "41.5 kg"').replace("mass = 1.2", 'mass = "1.2 kg"')
    rc, text = _merge(tmp_path, base, base.replace('mass = "kg"', 'mass = "lb"'),
                      base.replace('mass = "kg"', 'mass = "g"'))
    assert rc == 1
    (mine, other), = _sections(text)
    assert _data(mine)["units"]["mass"] == "lb" and _data(other)["units"]["mass"] == "g"


def test_the_change_logs_are_joined(tmp_path):
    entry = ('\n[[change]]\ntime = "{t}"\nauthor = "{a}"\naction = "edit"\nitem = "radio"\nsummary = "{s}"\n'
             'd_mass_kg = 0.1\nd_cg_m = [0.0, 0.0, 0.0]\n')
    base = HEAD + ITEMS + entry.format(t="2024-01-01T00:00:00Z", a="ana", s="first")
    ours = base + entry.format(t="2024-01-02T00:00:00Z", a="ben", s="ours")
    theirs = base + entry.format(t="2024-01-03T00:00:00Z", a="cy", s="theirs")
    rc, text = _merge(tmp_path, base, ours, theirs.replace("mass = 1.2", "mass = 1.3"))
    assert rc == 0
    assert [c["summary"] for c in _data(text)["change"]] == ["first", "ours", "theirs"]


def test_comments_of_ours_are_kept_where_nothing_changed(tmp_path):
    ours = HEAD + ITEMS.replace('[[item]]\nid = "radio"', '# bought 2024\n[[item]]\nid = "radio"')
    theirs = HEAD + ITEMS.replace("mass = 41.5", "mass = 40.0")
    rc, text = _merge(tmp_path, HEAD + ITEMS, ours, theirs)
    assert rc == 0
    assert "# bought 2024\n" in text and _data(text)["item"][0]["mass"] == 40.0


# --------------------------------------------------------------------------- exit codes and the reader


def test_an_unreadable_side_is_exit_2_and_ours_is_left_untouched(tmp_path, capsys):
    ours = HEAD + ITEMS.replace("mass = 1.2", "mass = 1.4")
    rc, text = _merge(tmp_path, HEAD + ITEMS, ours, HEAD + ITEMS.replace("mass = 1.2", "mass = -1.0"))
    assert rc == 2 and text == ours
    err = capsys.readouterr().err.strip()
    assert "theirs.toml" in err and "radio" in err and len(err.splitlines()) == 1


def test_a_marked_file_is_refused_by_every_reader_naming_the_line(tmp_path):
    ours = HEAD + ITEMS.replace("mass = 1.2", "mass = 1.4")
    rc, text = _merge(tmp_path, HEAD + ITEMS, ours, HEAD + ITEMS.replace("mass = 1.2", "mass = 1.6"))
    assert rc == 1
    marker = next(n for n, line in enumerate(text.splitlines(), start=1) if line.startswith("<<<<<<< "))
    with pytest.raises(tomllib.TOMLDecodeError):
        tomllib.loads(text)  # not TOML, as the standard library says too
    path = tmp_path / "ours.toml"
    rc, out, err = run_cli("rollup", path)  # the CLI
    assert rc == 2 and err.count("\n") == 1
    assert f"line {marker}: unresolved merge conflict" in err and str(path) in err
    with pytest.raises(FormatError, match=f"line {marker}: unresolved merge conflict"):
        open_ledger(path)  # what the editor opens files with


def test_marker_like_lines_inside_a_multi_line_string_are_text(tmp_path):
    text = HEAD + ITEMS + '\n[user]\nnote = """\n<<<<<<< not a marker\n=======\n>>>>>>> just text\n"""\n'
    assert tomllib.loads(text)["user"]["note"].startswith("<<<<<<<")  # valid TOML (tomllib)
    path = tmp_path / "l.toml"
    path.write_text(text)
    assert open_ledger(path).ledger.user["note"].endswith("just text\n")
