"""`diff` over the definitions beside the items: limits, allocations, [mac], [fuel], [growth], sequences, ...

Each case is a pair of ledgers written inline as TOML (parsed by the
standard library's tomllib) that differ in one definition, or only in how a
value is spelt. Expected values come from outside the program:
- unit factors: NIST SP 811 (Appendix B) exact definitions, 1 lb = 0.45359237 kg,
  1 in = 0.0254 m, 1 US gallon = 231 in³; worked with exact fractions;
- a percentage: 1 % = 0.01 (NIST SP 811 §7.10.2);
- "no difference" and "different" as diff(1) (POSIX): exit 0 and 1.
"""

from __future__ import annotations

import json
from fractions import Fraction as F

import pytest

from steelyard.cli.main import main
from steelyard.core.history.diff import compare
from support.ledgers import ledger_from_text, write_ledger

LB, IN = F("0.45359237"), F("0.0254")  # NIST SP 811, exact
GAL = 231 * IN ** 3  # US gallon, NIST SP 811, exact

HEAD = 'steelyard = 1\n\n[units]\nmass = "{mass}"\nlength = "{length}"\ninertia = "{inertia}"\n'
ITEMS = """
[[item]]
id = "frame"
group = "structure"
mass = {frame}
cg = [{x}, 0.0, 0.0]
{item_more}
[[item]]
id = "tank"
group = "payload/fuel"
mass = 2.0
cg = [1.2, 0.0, 0.0]
variable = true
density = 720.0

[[item]]
id = "aux-tank"
group = "aux"
mass = 1.0
cg = [1.4, 0.0, 0.0]
variable = true
density = 720.0

[[loadout]]
name = "full"
[loadout.set]
tank = 1.0
"""


def ledger_toml(tables: str = "", *, mass="kg", length="m", inertia="kg*m**2", frame="5.0", x="1.0",
                item_more="") -> str:
    return (HEAD.format(mass=mass, length=length, inertia=inertia)
            + ITEMS.format(frame=frame, x=x, item_more=item_more) + "\n" + tables)


def cli(capsys, *args):
    # a wide terminal, so that a long line is not wrapped in the middle of what a test looks for
    with pytest.MonkeyPatch.context() as mp:
        mp.setenv("COLUMNS", "240")
        rc = main([str(a) for a in args])
    out = capsys.readouterr()
    return rc, out.out, out.err


def pair(tmp_path, a_text: str, b_text: str):
    return write_ledger(tmp_path, a_text, "a.toml"), write_ledger(tmp_path, b_text, "b.toml")


def no_program_notation(text: str) -> None:
    # common practice: a report for people shows values, not a programming language's repr
    assert "{'" not in text and "['" not in text and "np." not in text and "float64" not in text, text


def si(x: F) -> float:
    return float(x)


# --------------------------------------------------------------------------- limits


def test_changed_limit_is_reported_with_both_values_and_exit_1(tmp_path, capsys):
    a, b = pair(tmp_path, ledger_toml('[[limit]]\nname = "mtow"\nmax_mass = 7.0\n'),
                ledger_toml('[[limit]]\nname = "mtow"\nmax_mass = 6.5\n'))
    rc, out, err = cli(capsys, "diff", a, b)
    assert rc == 1, err  # diff(1): 1 = different
    assert "Limit definitions:" in out
    assert "mtow: max_mass: 7 kg → 6.5 kg" in out
    no_program_notation(out)
    rc, out, _ = cli(capsys, "diff", a, b, "--json")
    rec = json.loads(out)
    assert rc == 1 and rec["identical"] is False
    lim = rec["definitions"]["limits"]
    assert lim["added"] == [] and lim["removed"] == []
    assert lim["changed"] == [{"name": "mtow", "fields": {"max_mass_kg": [7.0, 6.5]}}]
    # the item lists are untouched: nothing else differs
    assert rec["added"] == rec["removed"] == rec["changed"] == []


def test_limit_in_pounds_gives_si_in_json_and_pounds_in_text(tmp_path, capsys):
    a, b = pair(tmp_path, ledger_toml('[[limit]]\nname = "mtow"\nmax_mass = 1760.0\n', mass="lb", length="in",
                                      inertia="lb*in**2"),
                ledger_toml('[[limit]]\nname = "mtow"\nmax_mass = 1650.0\n', mass="lb", length="in",
                            inertia="lb*in**2"))
    rc, out, _ = cli(capsys, "diff", a, b, "--json")
    (change,) = json.loads(out)["definitions"]["limits"]["changed"]
    old, new = change["fields"]["max_mass_kg"]
    assert old == pytest.approx(si(1760 * LB), rel=1e-15) and new == pytest.approx(si(1650 * LB), rel=1e-15)
    rc, out, _ = cli(capsys, "diff", a, b)
    assert rc == 1 and "max_mass: 1760 lb → 1650 lb" in out


def test_unit_equal_spellings_are_no_difference(tmp_path, capsys):
    # A in lb/in with bare numbers; B in kg/m with every value given in lb or in (NIST SP 811: exact factors)
    tables_a = ('[[limit]]\nname = "mtow"\nmax_mass = 1760.0\n\n'
                '[[limit]]\nname = "lateral"\nmax_cg_offset = 2.0\naxis = "x"\nthrough = [0.0, 10.0]\n\n'
                '[mac]\nlemac = 114.0\nlength = 60.0\n\n'
                '[[allocation]]\ngroup = "structure"\nmass = 40.0\n\n'
                '[growth]\nlayout = 0.12\n')
    tables_b = ('[[limit]]\nname = "mtow"\nmax_mass = "1760 lb"\n\n'
                '[[limit]]\nname = "lateral"\nmax_cg_offset = "2 in"\naxis = "x"\nthrough = ["0 in", "10 in"]\n\n'
                '[mac]\nlemac = "114 in"\nlength = "5 ft"\n\n'
                '[[allocation]]\ngroup = "/structure/"\nmass = "40 lb"\n\n'
                '[growth]\nlayout = "12 %"\n')  # 1 % = 0.01 (NIST SP 811 §7.10.2); 5 ft = 60 in
    a_text = ledger_toml(tables_a, mass="lb", length="in", inertia="lb*in**2", frame="5.0", x="40.0")
    b_text = ledger_toml(tables_b, frame='"5 lb"', x='"40 in"').replace("mass = 2.0", 'mass = "2 lb"').replace(
        "mass = 1.0", 'mass = "1 lb"').replace("[1.2, 0.0, 0.0]", '["1.2 in", 0.0, 0.0]').replace(
        "[1.4, 0.0, 0.0]", '["1.4 in", 0.0, 0.0]').replace("density = 720.0", 'density = "720 lb/in**3"')
    a, b = pair(tmp_path, a_text, b_text)
    rc, out, err = cli(capsys, "diff", a, b, "--json")
    rec = json.loads(out)
    assert rc == 0, (err, rec["definitions"], rec["changed"])  # diff(1): 0 = no differences
    assert rec["identical"] is True
    assert all(not d["changed"] and not d["added"] and not d["removed"]
               for d in (rec["definitions"][k] for k in ("limits", "allocations", "sequences")))
    assert all(rec["definitions"][k] is None for k in ("mac", "fuel", "growth", "weighing", "user"))


def test_a_small_real_limit_change_is_found(tmp_path):
    a = ledger_from_text(ledger_toml('[[limit]]\nname = "mtow"\nmax_mass = "1760 lb"\n'))
    b = ledger_from_text(ledger_toml('[[limit]]\nname = "mtow"\nmax_mass = "1760.001 lb"\n'))
    d = compare(a, None, b, None)
    (name, fields), = d.tables.limits.changed
    old, new = fields["max_mass_kg"]
    assert not d.identical and name == "mtow"
    assert old == pytest.approx(si(1760 * LB), rel=1e-15)
    assert new == pytest.approx(si(F("1760.001") * LB), rel=1e-15)


def test_inertia_limit_reports_the_component(tmp_path, capsys):
    a, b = pair(tmp_path, ledger_toml('[[limit]]\nname = "roll"\nmax_inertia = { xx = 1200.0, zz = 2000.0 }\n'),
                ledger_toml('[[limit]]\nname = "roll"\nmax_inertia = { xx = 1300.0, zz = 2000.0 }\n'))
    rc, out, _ = cli(capsys, "diff", a, b)
    assert rc == 1 and "roll: max_inertia.xx: 1200 kg·m² → 1300 kg·m²" in out
    assert "zz" not in out.split("Limit definitions:")[1]  # an unchanged component is not listed
    no_program_notation(out)


def test_added_and_removed_limits(tmp_path, capsys):
    a, b = pair(tmp_path, ledger_toml('[[limit]]\nname = "mtow"\nmax_mass = 7.0\n'),
                ledger_toml('[[limit]]\nname = "mzfw"\nconditions = ["zero-fuel"]\nmax_mass = 5.5\n'))
    rc, out, _ = cli(capsys, "diff", a, b, "--json")
    lim = json.loads(out)["definitions"]["limits"]
    assert rc == 1 and lim["added"] == ["mzfw"] and lim["removed"] == ["mtow"]


# --------------------------------------------------------------------------- allocations


def test_added_removed_and_changed_allocations(tmp_path, capsys):
    a_text = ledger_toml('[[allocation]]\ngroup = "structure"\nmass = 6.0\n\n'
                         '[[allocation]]\ngroup = "aux"\nmass = 1.5\n')
    b_text = ledger_toml('[[allocation]]\ngroup = "structure"\nmass = 5.5\n\n'
                         '[[allocation]]\ngroup = "payload"\nmass = "4.4 lb"\n')
    a, b = pair(tmp_path, a_text, b_text)
    rc, out, _ = cli(capsys, "diff", a, b, "--json")
    al = json.loads(out)["definitions"]["allocations"]
    assert rc == 1
    assert al["added"] == ["payload"] and al["removed"] == ["aux"]
    assert al["changed"] == [{"name": "structure", "fields": {"mass_kg": [6.0, 5.5]}}]
    rc, out, _ = cli(capsys, "diff", a, b)
    section = out.split("Allocation definitions:")[1]
    assert "added payload" in section and "removed aux" in section
    assert "structure: mass: 6 kg → 5.5 kg" in section
    no_program_notation(out)


# --------------------------------------------------------------------------- [mac], [fuel], [growth]


def test_mac_change_and_mac_added(tmp_path, capsys):
    a, b = pair(tmp_path, ledger_toml('[mac]\nlemac = 114.0\nlength = 60.0\n', mass="lb", length="in",
                                      inertia="lb*in**2"),
                ledger_toml('[mac]\nlemac = 116.0\nlength = 60.0\n', mass="lb", length="in", inertia="lb*in**2"))
    rc, out, _ = cli(capsys, "diff", a, b, "--json")
    mac = json.loads(out)["definitions"]["mac"]
    assert rc == 1 and mac["status"] == "changed" and list(mac["fields"]) == ["lemac_m"]
    old, new = mac["fields"]["lemac_m"]
    assert old == pytest.approx(si(114 * IN), rel=1e-15) and new == pytest.approx(si(116 * IN), rel=1e-15)
    rc, out, _ = cli(capsys, "diff", a, b)
    assert "[mac] table:" in out and "lemac: 114 in → 116 in" in out

    a, b = pair(tmp_path, ledger_toml(), ledger_toml('[mac]\nlemac = 2.9\nlength = 1.5\n'))
    rc, out, _ = cli(capsys, "diff", a, b, "--json")
    mac = json.loads(out)["definitions"]["mac"]
    assert rc == 1 and mac == {"status": "added", "fields": {"lemac_m": [None, 2.9], "length_m": [None, 1.5]}}


def test_fuel_groups_change_reads_as_lists(tmp_path, capsys):
    a, b = pair(tmp_path, ledger_toml('[fuel]\ngroups = ["payload/fuel"]\n'),
                ledger_toml('[fuel]\ngroups = ["payload/fuel", "aux"]\n'))
    rc, out, _ = cli(capsys, "diff", a, b)
    assert rc == 1 and '[fuel] table:' in out
    assert 'groups: ["payload/fuel"] → ["payload/fuel", "aux"]' in out
    no_program_notation(out)
    rc, out, _ = cli(capsys, "diff", a, b, "--json")
    fuel = json.loads(out)["definitions"]["fuel"]
    assert fuel == {"status": "changed", "fields": {"groups": [["payload/fuel"], ["payload/fuel", "aux"]]}}


def test_growth_change_in_percent(tmp_path, capsys):
    a, b = pair(tmp_path, ledger_toml('[growth]\nlayout = 0.20\n'), ledger_toml('[growth]\nlayout = "25 %"\n'))
    rc, out, _ = cli(capsys, "diff", a, b)
    assert rc == 1 and "layout: 20 % → 25 %" in out
    rc, out, _ = cli(capsys, "diff", a, b, "--json")
    g = json.loads(out)["definitions"]["growth"]
    assert g["status"] == "changed" and list(g["fields"]) == ["layout"]
    assert g["fields"]["layout"] == pytest.approx([0.20, 0.25], rel=1e-15)  # 25 % = 0.25 (NIST SP 811 §7.10.2)


# --------------------------------------------------------------------------- sequences, weighing, user data


SEQUENCE = ('[[sequence]]\nname = "trip"\nloadout = "full"\n\n'
            '[[sequence.step]]\nname = "cruise"\nburn = {{ tank = "{amount}" }}\n')


def test_sequence_step_amount_in_si_and_gallons(tmp_path, capsys):
    a, b = pair(tmp_path, ledger_toml(SEQUENCE.format(amount="0.5 gal"), mass="lb", length="in",
                                      inertia="lb*in**2", frame="50.0").replace("mass = 2.0", "mass = 20.0"),
                ledger_toml(SEQUENCE.format(amount="0.75 gal"), mass="lb", length="in", inertia="lb*in**2",
                            frame="50.0").replace("mass = 2.0", "mass = 20.0"))
    rc, out, err = cli(capsys, "diff", a, b, "--json")
    assert rc == 1, err
    (change,) = json.loads(out)["definitions"]["sequences"]["changed"]
    old, new = change["fields"]["step 1"]
    assert old["items"]["tank"]["volume_m3"] == pytest.approx(si(F(1, 2) * GAL), rel=1e-15)
    assert new["items"]["tank"]["volume_m3"] == pytest.approx(si(F(3, 4) * GAL), rel=1e-15)
    rc, out, _ = cli(capsys, "diff", a, b)
    assert "trip: step 1: cruise: burn tank 0.5 gal, 100 samples → cruise: burn tank 0.75 gal" in out
    no_program_notation(out)


def test_weighing_reading_change(tmp_path, capsys):
    w = ('[weighing]\n[[weighing.point]]\nname = "nose"\nat = [10.0, 0.0, 0.0]\nreading = {r}\ntare = 0.0\n'
         '[[weighing.point]]\nname = "main"\nat = [60.0, 0.0, 0.0]\nreading = 400.0\ntare = 2.0\n')
    units = dict(mass="lb", length="in", inertia="lb*in**2")
    a, b = pair(tmp_path, ledger_toml(w.format(r="150.0"), **units), ledger_toml(w.format(r='"151 lb"'), **units))
    rc, out, _ = cli(capsys, "diff", a, b)
    assert rc == 1 and "[weighing] table:" in out and "point.nose.reading: 150 lb → 151 lb" in out
    rc, out, _ = cli(capsys, "diff", a, b, "--json")
    fields = json.loads(out)["definitions"]["weighing"]["fields"]
    assert list(fields) == ["point.nose.reading_kg"]
    assert fields["point.nose.reading_kg"] == pytest.approx([si(150 * LB), si(151 * LB)], rel=1e-15)


def test_user_data_and_item_keys_read_without_program_notation(tmp_path, capsys):
    a_text = ledger_toml('[user]\nowner = { team = "north", ids = [1, 2] }\n',
                         item_more='tolerance = { mass = 0.5, kind = "sigma" }\nuser = { note = "as drawn" }\n')
    b_text = ledger_toml('[user]\nowner = { team = "south", ids = [1, 2, 3] }\n',
                         item_more='tolerance = { mass = 0.6, kind = "sigma" }\nuser = { note = "as built" }\n')
    a, b = pair(tmp_path, a_text, b_text)
    rc, out, _ = cli(capsys, "diff", a, b)
    assert rc == 1
    assert 'owner: { team = "north", ids = [1, 2] } → { team = "south", ids = [1, 2, 3] }' in out
    assert 'kind = "sigma"' in out and "as drawn" in out and "as built" in out
    no_program_notation(out)


def test_item_tolerance_spelt_in_other_units_is_no_difference(tmp_path, capsys):
    # 0.5 lb written bare in a file in pounds, and as "0.5 lb" in a file in kilograms: one meaning
    a_text = ledger_toml(mass="lb", length="in", inertia="lb*in**2", frame="5.0", x="40.0",
                         item_more='tolerance = { mass = 0.5, cg = 1.0, kind = "bound" }\n')
    b_text = ledger_toml(frame='"5 lb"', x='"40 in"',
                         item_more='tolerance = { mass = "0.5 lb", cg = ["1 in", "1 in", "1 in"], kind = "bound" }\n')
    a, b = ledger_from_text(a_text), ledger_from_text(b_text)
    d = compare(a, None, b, None, loadouts=False)
    assert [c.id for c in d.changed if "tolerance" in c.fields] == []


def test_snapshot_keeps_the_meaning_of_every_table(tmp_path, capsys):
    # a snapshot is written in SI with the tables' numbers pinned to their units: the same limits and [mac]
    text = ledger_toml('[[limit]]\nname = "mtow"\nmax_mass = 20.0\n\n[mac]\nlemac = 40.0\nlength = 12.0\n\n'
                       '[[allocation]]\ngroup = "structure"\nmass = 6.0\n\n[fuel]\ngroups = ["payload/fuel"]\n',
                       mass="lb", length="in", inertia="lb*in**2", x="40.0")
    src = write_ledger(tmp_path, text, "a.toml")
    snap = tmp_path / "snap.toml"
    assert main(["snapshot", str(src), "-o", str(snap)]) == 0
    capsys.readouterr()
    rc, out, _ = cli(capsys, "diff", src, snap, "--json")
    defs = json.loads(out)["definitions"]
    assert defs["limits"]["changed"] == [] and defs["mac"] is None and defs["allocations"]["changed"] == []
    assert defs["not_compared"] == ["fuel", "sequences"]  # a snapshot has nothing left to load
