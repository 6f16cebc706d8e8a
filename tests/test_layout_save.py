"""Layout-preserving saves: what a save did not change keeps its bytes.

References outside the program:
- the original file itself (a no-op save must give back its exact bytes);
- Python's `difflib` for which lines a save changed;
- `tomllib` (the standard library's TOML 1.0 reader) for what a text means,
  and for where tables really are (a header-like line inside a multi-line
  string or array is not a table);
- `tomlkit`, an independent style-preserving TOML library, for the exact
  text of every table the edit did not touch;
- NIST SP 811 exact factors (1 lb = 0.45359237 kg, 1 in = 0.0254 m) for the
  values typed in the tests, and through tests/test_round_trip.py's
  `assert_same_meaning` for "means the same as the canonical writer's text".
"""

from __future__ import annotations

import difflib
import json
import shutil
import subprocess
import sys
import tomllib
from fractions import Fraction as F
from pathlib import Path

import pytest
import tomlkit
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from steelyard.core.document.model import Amount, FileUnits, Item, Loadout
from steelyard.core.history.changes import History, ledger_with_log, log_from_ledger
from steelyard.io.ledger.file import open_ledger, save_ledger
from steelyard.io.ledger.layout import preserve, preserving_text
from steelyard.io.ledger.layout_scan import pieces
from steelyard.io.ledger.read import ledger_from_data
from steelyard.io.ledger.write import ledger_to_toml

from test_round_trip import assert_same_meaning, documents_in_any_order

ROOT = Path(__file__).resolve().parents[1]
FIXTURES = ROOT / "fixtures"
TRAINER = FIXTURES / "trainer.toml"
LB, IN = F("0.45359237"), F("0.0254")  # NIST SP 811, exact


def lb(x: float) -> float:
    """What a bare `x` in a lb file means in kg: x times the exact factor, rounded as a float product."""
    return x * float(LB)


def inch(x: float) -> float:
    return x * float(IN)


def read(text: str):
    return ledger_from_data(tomllib.loads(text), source="t.toml")


def changed_lines(before: str, after: str) -> tuple[list[str], list[str]]:
    """(removed, added) lines by difflib's ndiff (Python standard library)."""
    diff = list(difflib.ndiff(before.splitlines(), after.splitlines()))
    return [d[2:] for d in diff if d.startswith("- ")], [d[2:] for d in diff if d.startswith("+ ")]


def with_log(ledger, new, item):
    """`new` with a change-log entry, as the editor saves it (core History, then its [[change]] tables)."""
    h = History(ledger, log=log_from_ledger(ledger))
    h.apply(new, action="edit", item=item, summary="test edit", loadout=None, author="tester")
    return ledger_with_log(h.ledger, h.log)


def block_lines(text: str, first_line: str) -> list[str]:
    """The lines of the table whose body starts with `first_line` after its header, as tomllib cuts them."""
    lines = text.splitlines()
    k = lines.index(first_line)
    start = k - 1
    end = k + 1
    while end < len(lines) and lines[end].strip() and not lines[end].startswith("["):
        end += 1
    return lines[start:end]


# ------------------------------------------------------------------ the tokenizer


TRICKY = [
    '"""\n[[item]]\nid = "ghost"\n"""',  # a multi-line basic string holding a header-like line
    "'''\n[[item]]\n[units]\n'''",  # and a literal one
    '"""a""""',  # four quotes at the end: one is content (TOML 1.0)
    "'''b'''''",  # five: two are content
    '"""\\\n  [[item]]\n"""',  # a line-ending backslash
    "[\n  [1, 2],\n  # [[item]]\n  [3, 4],\n]",  # a multi-line array whose lines start with '['
    '{ a = "]", b = [1, [2]] }',
    '"a [[item]] # not a comment"',
    "'[x]'",
    '["x", """\n[[item]]\n"""]',
]


@st.composite
def tricky_texts(draw):
    n = draw(st.integers(1, 6))
    parts = ["steelyard = 1", "# [[item]] in a comment"]
    for k in range(n):
        header = draw(st.sampled_from(["[[item]]", "  [[item]]", '[[ "item" ]]', "[[item]]  # note [x]"]))
        body = [f'id = "p{k}"', "mass = 1.0", "cg = [0.0, 0.0, 0.0]"]
        for j in range(draw(st.integers(0, 3))):
            body.append(f"user.k{j} = {draw(st.sampled_from(TRICKY))}")
        if draw(st.booleans()):
            body.append("# trailing [[item]]")
        parts.append("\n".join([header] + body))
    return "\n\n".join(parts) + draw(st.sampled_from(["\n", "", "\n\n# end\n"]))


@settings(max_examples=150, deadline=None, suppress_health_check=list(HealthCheck))
@given(tricky_texts())
def test_tables_are_found_where_tomllib_finds_them(text):
    data = tomllib.loads(text)  # TOML 1.0 reference reader
    spans, headers = pieces(text)
    assert "".join(text[p.start:p.end] for p in spans) == text  # every byte in exactly one piece
    items = [p for p in spans if p.header is not None and p.header >= 0 and headers[p.header].path == ("item",)]
    assert len(items) == len(data["item"])
    for p, table in zip(items, data["item"]):  # each piece's body is exactly that table
        assert tomllib.loads("steelyard = 1\n" + text[p.body_start:p.body_end])["item"] == [table]


# ------------------------------------------------------------------ saves of the fixtures


@pytest.mark.parametrize("name", ["trainer.toml", "cargo-drone.toml", "weighing-example.toml",
                                  "trainer-overweight.toml"])
def test_a_save_without_edits_writes_the_same_bytes(tmp_path, name):
    path = tmp_path / name
    shutil.copy(FIXTURES / name, path)
    loaded = open_ledger(path)
    # what the editor writes: the ledger with its change log made again from the file's own
    save_ledger(path, ledger_with_log(loaded.ledger, log_from_ledger(loaded.ledger)), loaded=loaded)
    assert path.read_bytes() == (FIXTURES / name).read_bytes()  # oracle: the file itself


def test_one_mass_edit_changes_that_line_only(tmp_path):
    path = tmp_path / "t.toml"
    shutil.copy(TRAINER, path)
    loaded = open_ledger(path)
    battery = loaded.ledger.item("battery")
    new = loaded.ledger.with_item(battery.evolve(mass=lb(26.5)))  # 26.5 lb
    save_ledger(path, new, loaded=loaded)
    removed, added = changed_lines(TRAINER.read_text(), path.read_text())  # difflib
    assert (removed, added) == (["mass = 24.0"], ["mass = 26.5"])


def test_mass_edit_with_its_change_log_entry(tmp_path):
    path = tmp_path / "t.toml"
    shutil.copy(TRAINER, path)
    loaded = open_ledger(path)
    old = loaded.ledger
    new = with_log(old, old.with_item(old.item("battery").evolve(mass=lb(26.5))), "battery")
    save_ledger(path, new, loaded=loaded)
    before, after = TRAINER.read_text(), path.read_text()
    removed, added = changed_lines(before, after)  # difflib
    assert removed == ["mass = 24.0"] and added[0] == "mass = 26.5"
    log = tomllib.loads(after)["change"]  # tomllib: the other added lines are exactly that one entry
    assert len(log) == 1 and log[0]["item"] == "battery" and log[0]["author"] == "tester"
    assert tomllib.loads("\n".join(added[1:])) == {"change": log}


def test_add_and_remove_an_item(tmp_path):
    text = TRAINER.read_text()
    old = read(text)
    radio = Item("radio-2", lb(2.3), (inch(142.0), 0.0, inch(38.0)), name="Second radio",
                 group="avionics/panel")
    new = old.evolve(items=tuple(it for it in old.items if it.id != "wing-r") + (radio,))
    out = preserving_text(text, old, new)
    removed, added = changed_lines(text, out)
    assert sorted(removed) == sorted(block_lines(text, 'id = "wing-r"') + [""])
    assert [a for a in added if a] == ["[[item]]", 'id = "radio-2"', 'name = "Second radio"',
                                       'group = "avionics/panel"', "mass = 2.3", "cg = [142.0, 0.0, 38.0]"]
    data = tomllib.loads(out)  # tomllib: the new item is the last one, the removed one is gone
    assert [it["id"] for it in data["item"]][-1] == "radio-2" and "wing-r" not in [it["id"] for it in data["item"]]
    assert out.count("\n#") == text.count("\n#")  # no comment went with them (wing-r has none of its own)


def test_add_and_remove_a_loadout_and_a_limit(tmp_path):
    text = TRAINER.read_text()
    old = read(text)
    limits = [dict(x) for x in old.limits if x["name"] != "max-landing-mass"]
    limits.append({"name": "max-ramp-mass", "conditions": ["ramp"], "max_mass": 1770.0})
    new = old.evolve(loadouts=tuple(lo for lo in old.loadouts if lo.name != "max-baggage")
                     + (Loadout("ferry", {"fuel-l": Amount("fraction", 1.0), "fuel-r": Amount("fraction", 1.0)}),),
                     limits=tuple(limits))
    r = preserve(text, old, new)
    assert r.how == "patched", r.why
    removed, added = changed_lines(text, r.text)
    assert sorted(x for x in removed if x) == sorted(
        ['[[loadout]]', 'name = "max-baggage"', "[loadout.set]", 'pilot = "170 lb"', "fuel-l = 0.75",
         "fuel-r = 0.75", "baggage = 1.0", "[[limit]]", 'name = "max-landing-mass"', 'conditions = ["landing"]',
         "max_mass = 1760.0"])
    assert [x for x in added if x] == [
        "[[loadout]]", 'name = "ferry"', "[loadout.set]", "fuel-l = 1.0", "fuel-r = 1.0",
        "[[limit]]", 'name = "max-ramp-mass"', 'conditions = ["ramp"]', "max_mass = 1770.0"]
    # tomllib: the output means the original with the same edit made to tomllib's own reading of it
    expected = tomllib.loads(text)
    expected["loadout"] = [lo for lo in expected["loadout"] if lo["name"] != "max-baggage"] + [
        {"name": "ferry", "set": {"fuel-l": 1.0, "fuel-r": 1.0}}]
    expected["limit"] = [x for x in expected["limit"] if x["name"] != "max-landing-mass"] + [
        {"name": "max-ramp-mass", "conditions": ["ramp"], "max_mass": 1770.0}]
    assert tomllib.loads(r.text) == expected


def test_loadout_amount_edit_touches_its_line_only():
    text = TRAINER.read_text()
    old = read(text)
    los = tuple(lo if lo.name != "trip" else Loadout(lo.name, {**lo.set, "pilot": Amount("mass", 90.0, "90 kg")})
                for lo in old.loadouts)
    out = preserving_text(text, old, old.evolve(loadouts=los))
    assert changed_lines(text, out) == (['pilot = "190 lb"'], ['pilot = "90 kg"'])  # difflib


# ------------------------------------------------------------------ hand-written layouts

HAND = '''steelyard = 1   # format version

[units]
mass = "lb"
length = "in"

# the first part
[[item]]
  id = "a"       # keep me
  mass = 2.30    # weighed 2024-03-01
  cg = [
    10.0,        # station
    0.0,
    5.0,
  ]
  user = { note = """
[[item]]
not a table
""" }

[[item]]
id = "b"
mass = 1
cg = [0, 0, 0]
'''


def test_untouched_number_text_and_same_line_comments_are_kept():
    old = read(HAND)
    new = old.with_item(old.item("b").evolve(mass=lb(3.0)))  # 3 lb
    out = preserving_text(HAND, old, new)
    assert changed_lines(HAND, out) == (["mass = 1"], ["mass = 3.0"])  # difflib: "2.30" and "# keep me" stay
    a = old.item("a")
    out = preserving_text(HAND, old, old.with_item(a.evolve(mass=lb(2.5))))
    assert changed_lines(HAND, out) == (["  mass = 2.30    # weighed 2024-03-01"],
                                        ["  mass = 2.5    # weighed 2024-03-01"])


def test_edit_inside_a_multi_line_array_and_string():
    old = read(HAND)
    a = old.item("a")
    new = old.with_item(a.evolve(cg=(inch(10.5), 0.0, inch(5.0)), user={"note": "fitted"}))
    r = preserve(HAND, old, new)
    assert r.how == "patched", r.why
    removed, added = changed_lines(HAND, r.text)  # difflib
    assert removed == ["  cg = [", "    10.0,        # station", "    0.0,", "    5.0,", "  ]",
                       '  user = { note = """', "[[item]]", "not a table", '""" }']
    assert added == ["  cg = [10.5, 0.0, 5.0]", '  user = { note = "fitted" }']
    assert tomllib.loads(r.text)["item"][0]["user"] == {"note": "fitted"}  # tomllib


def test_crlf_and_byte_order_mark_are_kept(tmp_path):
    path = tmp_path / "w.toml"
    raw = b"\xef\xbb\xbf" + HAND.replace("\n", "\r\n").encode()
    path.write_bytes(raw)
    loaded = open_ledger(path)
    save_ledger(path, loaded.ledger, loaded=loaded)
    assert path.read_bytes() == raw  # oracle: the file itself
    loaded = open_ledger(path)
    b = loaded.ledger.item("b")
    save_ledger(path, loaded.ledger.with_item(b.evolve(name="Bee")), loaded=loaded)
    data = path.read_bytes()
    assert data.startswith(b"\xef\xbb\xbf") and data.count(b"\n") == data.count(b"\r\n") == raw.count(b"\n") + 1
    assert tomllib.loads(data.decode("utf-8-sig"))["item"][1]["name"] == "Bee"  # tomllib


def test_a_layout_it_cannot_edit_is_saved_canonically_and_reads_right(tmp_path):
    text = 'steelyard = 1\nunits = { mass = "lb" }  # inline, before any header\n\n[[item]]\nid = "a"\nmass = 1.0\n' \
           'cg = [0.0, 0.0, 0.0]\n'
    old = read(text)
    new = old.evolve(units=FileUnits("kg", "m", "kg*m**2"))
    r = preserve(text, old, new)
    assert r.how == "canonical" and r.text == ledger_to_toml(new)
    assert tomllib.loads(r.text)["item"][0]["mass"] == float(LB)  # 1 lb in kg, NIST SP 811
    path = tmp_path / "inline.toml"
    path.write_text(text)
    loaded = open_ledger(path)
    record = save_ledger(path, new, loaded=loaded)
    assert "units" in record.not_kept and tomllib.loads(path.read_text())["units"]["mass"] == "kg"  # said, not silent


# ------------------------------------------------------------------ tomlkit as the oracle


def body(table) -> str:
    """A table's own text from tomlkit, without the comments and blank lines after its last key."""
    lines = table.as_string().splitlines()
    while lines and (not lines[-1].strip() or lines[-1].lstrip().startswith("#")):
        lines.pop()
    return "\n".join(lines)


def test_tomlkit_sees_every_untouched_table_unchanged():
    text = TRAINER.read_text()
    old = read(text)
    edited = {"battery", "elt"}
    new = old.with_item(old.item("battery").evolve(mass=lb(25.0)))
    new = new.with_item(new.item("elt").evolve(cg=(inch(215.0), 0.0, inch(24.0))))
    new = with_log(old, new.evolve(envelopes=new.envelopes[:1]), "battery")
    out = preserving_text(text, old, new)
    a, b = tomlkit.parse(text), tomlkit.parse(out)  # tomlkit keeps each table's exact text
    before = {str(t["id"]): body(t) for t in a["item"]}
    after = {str(t["id"]): body(t) for t in b["item"]}
    assert before.keys() == after.keys()
    for k in before:
        assert (before[k] == after[k]) is (k not in edited), k
    for name in ("loadout", "limit", "sequence"):
        assert [body(t) for t in a[name]] == [body(t) for t in b[name]], name
    assert body(a["envelope"][0]) == body(b["envelope"][0]) and len(b["envelope"]) == 1
    for name in ("units", "frame", "mac", "fuel"):
        assert body(a[name]) == body(b[name]), name


# ------------------------------------------------------------------ generated ledgers, random edits


def sprinkle(text: str, draw) -> str:
    """Comments, blank lines and indentation put in where TOML allows them (every line is a whole statement)."""
    out = []
    for k, line in enumerate(text.rstrip("\n").split("\n")):  # TOML's newline only (not U+2028 inside strings)
        if draw(st.integers(0, 5)) == 0:
            out.append(f"# note {k} [[item]] \"quoted\"")
        if draw(st.integers(0, 7)) == 0:
            out.append("")
        if line and draw(st.integers(0, 4)) == 0:
            line += f"  # on line {k}"
        if line and not line.startswith("[") and draw(st.integers(0, 6)) == 0:
            line = "  " + line
        out.append(line)
    return "\n".join(out) + "\n"


EDITS = ("mass", "delete", "add", "rename", "limit", "limit-add", "limit-delete", "amount", "user", "log")


def edit(ledger, what: str, draw):
    fixed = [it for it in ledger.items if not it.variable]
    if not fixed and what in ("mass", "delete", "rename"):
        return ledger
    if what == "mass":
        it = draw(st.sampled_from(fixed))
        return ledger.with_item(it.evolve(mass=it.mass * 1.5 + 1.0))
    if what == "delete":
        gone = draw(st.sampled_from(fixed)).id
        return ledger.evolve(items=tuple(it for it in ledger.items if it.id != gone))
    if what == "add":
        return ledger.evolve(items=ledger.items + (Item("added", 2.5, (0.5, 0.0, 0.0), group="new"),))
    if what == "rename":
        it = draw(st.sampled_from(fixed))
        return ledger.evolve(items=tuple(x.evolve(id="renamed") if x is it else x for x in ledger.items))
    if what == "limit":
        return ledger.evolve(limits=tuple({**x, "max_mass": x["max_mass"] * 2} if "max_mass" in x else x
                                          for x in ledger.limits))
    if what == "limit-add":
        return ledger.evolve(limits=ledger.limits + ({"name": "extra", "max_mass": 1e9},))
    if what == "limit-delete":
        return ledger.evolve(limits=ledger.limits[1:])
    if what == "amount":
        los = tuple(Loadout(lo.name, {**lo.set, "tank": Amount("fraction", 0.5)}, lo.base, lo.off, lo.on,
                            lo.condition, lo.user) if lo.name == "full" else lo for lo in ledger.loadouts)
        return ledger.evolve(loadouts=los)
    if what == "user":
        return ledger.evolve(user={**(ledger.user or {}), "edited": True})
    return ledger.evolve(changes=ledger.changes + ({**ledger.changes[0], "summary": "second"},))


@settings(max_examples=60, deadline=None, suppress_health_check=list(HealthCheck))
@given(documents_in_any_order(), st.data())
def test_random_edits_keep_what_they_do_not_touch(case, data):
    _doc, plain = case
    text = sprinkle(plain, data.draw)
    old = read(text)
    new = old
    edits = data.draw(st.lists(st.sampled_from(EDITS), min_size=1, max_size=3, unique=True))
    for what in edits:
        new = edit(new, what, data.draw)
    canonical = ledger_to_toml(new)
    try:
        read(canonical)
    except Exception:  # an edit that breaks a reference (a deleted item a loadout names): not a valid ledger
        assume(False)
    r = preserve(text, old, new)
    assert r.how in ("patched", "unchanged"), r.why
    assert_same_meaning(canonical, r.text)  # tomllib + NIST SP 811: the meaning of the canonical text
    a, b = tomlkit.parse(text), tomlkit.parse(r.text)  # tomlkit: untouched items keep their exact text
    after = {str(t["id"]): body(t) for t in b["item"]}
    new_items = {it.id: it for it in new.items}
    for t, it in zip(a["item"], old.items):
        if new_items.get(it.id) == it:
            assert after[it.id] == body(t), it.id
    comments = [line for line in text.splitlines() if line.startswith("# note")]
    kept = [line for line in r.text.splitlines() if line.startswith("# note")]
    if any(what in ("delete", "limit-delete") for what in edits):
        assert set(kept) <= set(comments)  # only comments of removed tables go
    else:
        assert kept == comments


# ------------------------------------------------------------------ commands


def test_import_into_in_place_keeps_comments(tmp_path):
    path = tmp_path / "t.toml"
    shutil.copy(TRAINER, path)
    csv = tmp_path / "parts.csv"
    csv.write_text("id,mass [lb],x [in],y [in],z [in]\nwing-l,101.5,138,-84,50\n")
    r = subprocess.run([sys.executable, "-m", "steelyard", "import", str(csv), "-o", str(path), "--into", str(path),
                        "--author", "tester"], capture_output=True, text=True)
    assert r.returncode == 0, r.stderr
    removed, added = changed_lines(TRAINER.read_text(), path.read_text())  # difflib
    assert removed == ["mass = 99.0"] and added[0] == "mass = 101.5" and "[[change]]" in added
    log = tomllib.loads(path.read_text())["change"]
    assert len(log) == 1 and log[0]["action"] == "import"
    assert json.dumps(tomllib.loads(path.read_text())["item"][1]) == json.dumps(
        tomllib.loads(TRAINER.read_text())["item"][1])  # wing-r untouched (tomllib)
