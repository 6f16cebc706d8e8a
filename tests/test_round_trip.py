"""Every writer is a round trip: read -> write -> read means the same, for every table, in any order.

Generated ledgers carry every table the format documents (items with every
key, loadouts, envelopes with scope, limits of each kind, [mac], [fuel],
[growth], allocations, sequences, [weighing], the change log, [user]), written
as TOML text with the arrays of tables interleaved the way a person may write
them. The reference for "means the same" is outside the program: the
standard library's tomllib reading of the input text and of what steelyard
wrote (TOML 1.0), and exact NIST SP 811 factors for the v1 numbers. Checked:

- the ledger writer: tables held as written come back identical (tomllib of
  the output against tomllib of the input), v1 numbers equal after exact unit
  conversion (within 2 ulp, the writer's documented bound), the same
  `check --json` and `rollup --json`, and a no-op re-save writes the same bytes;
- the snapshot writer: the snapshot reads back, verifies, and rolls up like
  the loadout it froze;
- the journal: the record of an edit replays to the same ledger.
"""

from __future__ import annotations

import datetime as dt
import json
import math
import tomllib
from fractions import Fraction as F

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from steelyard.cli.render.check import check_record
from steelyard.core.errors import SteelyardError
from steelyard.core.limits.checks import check_ledger
from steelyard.core.loading.loadout import resolve
from steelyard.core.physics.rollup import rollup_state
from steelyard.io.durability.journal_records import edit_record, replay
from steelyard.io.exchange.rollup_json import record_from
from steelyard.io.ledger.read import ledger_from_data
from steelyard.io.ledger.snapshot import snapshot_text, verify_snapshot
from steelyard.io.ledger.write import ledger_to_toml

# Exact factors to SI (NIST SP 811, Appendix B)
MASS = {"kg": F(1), "lb": F("0.45359237")}
LENGTH = {"m": F(1), "in": F("0.0254")}
UNITS = [("kg", "m", "kg*m**2"), ("lb", "in", "lb*in**2")]
TABLES_AS_WRITTEN = ("limit", "mac", "fuel", "growth", "allocation", "sequence", "weighing", "change", "user")
SETTINGS = dict(max_examples=60, deadline=None, suppress_health_check=list(HealthCheck))


# --------------------------------------------------------------------------- TOML text, written here


def _key(k: str) -> str:
    return k if k.replace("-", "").replace("_", "").isalnum() and k.isascii() else json.dumps(k)


def inline(v) -> str:
    """A TOML inline value (TOML 1.0 grammar; json string escapes are valid TOML basic-string escapes)."""
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        return repr(v) if math.isfinite(v) else ("nan" if v != v else ("inf" if v > 0 else "-inf"))
    if isinstance(v, str):  # TOML basic strings also forbid a raw DEL (U+007F)
        return json.dumps(v, ensure_ascii=False).replace("\x7f", "\\u007f")
    if isinstance(v, dt.datetime):
        return v.isoformat()
    if isinstance(v, dt.date):
        return v.isoformat()
    if isinstance(v, list):
        return "[" + ", ".join(inline(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{ " + ", ".join(f"{_key(k)} = {inline(x)}" for k, x in v.items()) + " }" if v else "{}"
    raise TypeError(type(v))


def block(header: str, table: dict) -> str:
    return "\n".join([header] + [f"{_key(k)} = {inline(v)}" for k, v in table.items()])


def document_text(doc: dict, order: list[tuple[str, int]]) -> str:
    """The document as text: `steelyard`, then the tables in `order` ((name, index) pairs)."""
    parts = ["steelyard = 1"]
    for name, k in order:
        value = doc[name]
        if isinstance(value, list):
            parts.append(block(f"[[{name}]]", value[k]))
        else:
            parts.append(block(f"[{name}]", value))
    return "\n\n".join(parts) + "\n"


# --------------------------------------------------------------------------- generated documents

names = st.text("abcdefghijklmnopqrstuvwxyz-", min_size=1, max_size=8)
user_values = st.recursive(
    st.one_of(st.booleans(), st.integers(-10**12, 10**12), st.text(max_size=12),
              st.floats(allow_nan=False, allow_infinity=False, width=64),  # extremes: user data is never computed
              st.dates(dt.date(1990, 1, 1), dt.date(2090, 1, 1))),
    lambda inner: st.one_of(st.lists(inner, max_size=3), st.dictionaries(names, inner, max_size=3)),
    max_leaves=8)
#: free text of a change's reason and request: quotes, backslashes, control characters, any script
notes = st.text(st.characters(blacklist_categories=("Cs",)), min_size=1, max_size=20)
user_tables = st.dictionaries(names, user_values, min_size=1, max_size=3)


@st.composite
def documents(draw):
    mass_u, len_u, inertia_u = draw(st.sampled_from(UNITS))
    doc: dict = {"units": {"mass": mass_u, "length": len_u, "inertia": inertia_u}, "frame": {"x": "aft", "y": "right", "z": "up"}}
    n_fixed = draw(st.integers(1, 4))
    big = draw(st.sampled_from([1.0, 1e6, 1e-6]))  # extreme but finite magnitudes
    items = []
    for k in range(n_fixed):
        it = {"id": f"part-{k}", "mass": draw(st.floats(0.01, 100.0)) * big,
              "cg": [draw(st.floats(-50, 50)), draw(st.floats(-5, 5)), draw(st.floats(-5, 5))],
              "group": draw(st.sampled_from(["structure", "avionics/com", "power", ""]))}
        if draw(st.booleans()):
            it["maturity"] = draw(st.sampled_from(["estimated", "layout", "released", "measured"]))
        if draw(st.booleans()):
            it["growth"] = draw(st.sampled_from([0.05, "12 %", 0.0]))
        if draw(st.booleans()):
            it["tolerance"] = {"mass": draw(st.sampled_from([0.5, "5 %"])), "cg": [0.1, 0.2, 0.05],
                               "kind": draw(st.sampled_from(["sigma", "bound"]))}
        if draw(st.booleans()):
            it["user"] = draw(user_tables)
        items.append(it)
    items[-1]["removable"] = True
    tank = {"id": "tank", "mass": 60.0, "cg": [3.0, 0.0, 1.0], "variable": True, "group": "payload/fuel",
            "cg_table": [[0.0, 2.5, 0.0, 0.8], [1.0, 3.0, 0.0, 1.0]]}
    seat = {"id": "seat", "mass": 90.0, "cg": [1.5, 0.0, 0.5], "variable": True, "group": "payload/people"}
    items += [tank, seat]
    draw(st.randoms()).shuffle(items)
    doc["item"] = items
    doc["loadout"] = [{"name": "full", "set": {"tank": 1.0, "seat": 1.0}, "condition": "takeoff"},
                      {"name": "light", "base": "full", "set": {"tank": 0.25}, "off": [items_removable(items)],
                       "user": {"note": "ferry"}}]
    span = sum(it["mass"] for it in items) * 4
    doc["envelope"] = [{"name": "normal", "axis": "x", "points": [[-60.0, 1e-9], [-60.0, span], [60.0, span], [60.0, 1e-9]]},
                       {"name": "light-only", "axis": "y", "points": [[-10.0, 1e-9], [-10.0, span], [10.0, span], [10.0, 1e-9]],
                        "loadouts": ["light"]}]
    doc["limit"] = [{"name": "mtow", "max_mass": span, "conditions": ["takeoff"]},
                    {"name": "spin", "min_inertia": {"xx": 0.0}},
                    {"name": "offset", "max_cg_offset": 100.0, "axis": "x", "through": [0.0, 0.0]}]
    doc["mac"] = {"lemac": 1.0, "length": 2.0}
    doc["fuel"] = {"groups": ["payload/fuel"]}
    doc["growth"] = {"layout": 0.2}
    doc["allocation"] = [{"group": "", "mass": span}, {"group": "avionics", "mass": "5 kg"}]
    doc["sequence"] = [{"name": "burn", "loadout": "full", "step": [{"burn": {"tank": 0.5}}, {"remove": ["seat"]}]}]
    doc["weighing"] = {"replaces": items_fixed(items), "point": [
        {"name": "left", "at": [1.0, -1.0, 0.0], "reading": 10.0, "tare": 0.0},
        {"name": "right", "at": [1.0, 1.0, 0.0], "reading": 10.0, "tare": 0.0},
        {"name": "nose", "at": [-1.0, 0.0, 0.0], "reading": 5.0, "tare": 0.5}]}
    doc["change"] = [{"time": "2026-05-04T09:12:33Z", "author": "tester", "action": "edit", "item": "part-0",
                      "summary": "moved", "d_mass_kg": 0.0, "d_cg_m": [0.0, 0.0, 0.0], "d_margin_m": {"normal": 0.0}},
                     # the compact form: reason and change request, tables inline, undefined values left out
                     {"time": "2026-05-05T10:00:00Z", "author": "tester", "action": "add", "item": "part-1",
                      "summary": "added", "reason": draw(notes), "request": draw(notes), "d_mass_kg": 0.3,
                      "after": {"id": "part-1", "mass_kg": 0.3, "cg_m": [1.0, 0.0, 0.0]}},
                     # an old-style entry: float noise and sub-tables, kept as written
                     {"time": "2026-05-06T11:00:00Z", "author": "tester", "action": "edit", "item": "part-0",
                      "summary": "noise", "d_mass_kg": 0.1 + 0.2, "d_cg_m": [0.1 + 0.2, 0.0, -1e-17],
                      "before": {"id": "part-0", "mass_kg": 0.30000000000000004},
                      "after": {"id": "part-0", "mass_kg": 0.6000000000000001}}]
    doc["user"] = draw(user_tables)
    return doc


def items_removable(items):
    return next(it["id"] for it in items if it.get("removable"))


def items_fixed(items):
    return next(it["id"] for it in items if not it.get("variable"))


@st.composite
def documents_in_any_order(draw):
    doc = draw(documents())
    order = [(name, k) for name, v in doc.items() for k in (range(len(v)) if isinstance(v, list) else [0])]
    shuffled = draw(st.permutations(order))
    # within one array of tables, the file's order is the array's order: keep it, interleave the rest
    seen: dict[str, int] = {}
    fixed = []
    for name, _ in shuffled:
        fixed.append((name, seen.get(name, 0)))
        seen[name] = seen.get(name, 0) + 1
    return doc, document_text(doc, fixed)


# --------------------------------------------------------------------------- comparisons


def si(value, unit: str, table: dict) -> float:
    return float(F(value) * table[unit])


def assert_same_meaning(text_in: str, text_out: str) -> None:
    """tomllib's reading of what steelyard wrote means what tomllib read from the input."""
    a, b = tomllib.loads(text_in), tomllib.loads(text_out)
    for name in TABLES_AS_WRITTEN:
        assert a.get(name) == b.get(name), name  # held as written: identical values
    ma, la = a["units"]["mass"], a["units"]["length"]
    mb, lb_ = b["units"]["mass"], b["units"]["length"]
    out = {it["id"]: it for it in b["item"]}
    assert [it["id"] for it in a["item"]] == [it["id"] for it in b["item"]]
    for it in a["item"]:
        w = out[it["id"]]
        assert math.isclose(si(it["mass"], ma, MASS), si(w["mass"], mb, MASS), rel_tol=4.5e-16, abs_tol=0)
        for x, y in zip(it["cg"], w["cg"]):
            assert math.isclose(si(x, la, LENGTH), si(y, lb_, LENGTH), rel_tol=4.5e-16, abs_tol=1e-300)
        for key in ("maturity", "growth", "tolerance", "removable", "cg_table", "user", "variable", "group"):
            assert it.get(key) == w.get(key) or (key in ("removable", "variable", "group") and
                                                  not it.get(key) and not w.get(key)), key
    assert [lo["name"] for lo in a["loadout"]] == [lo["name"] for lo in b["loadout"]]
    for x, y in zip(a["loadout"], b["loadout"]):
        assert {k: v for k, v in x.items() if k != "set"} == {k: v for k, v in y.items() if k != "set"}
        assert x.get("set", {}).keys() == y.get("set", {}).keys()
    assert [e["name"] for e in a["envelope"]] == [e["name"] for e in b["envelope"]]
    for x, y in zip(a["envelope"], b["envelope"]):
        assert {k: v for k, v in x.items() if k != "points"} == {k: v for k, v in y.items() if k != "points"}


def numbers_close(x, y, path="$"):
    if isinstance(x, dict):
        assert x.keys() == y.keys(), path
        for k in x:
            numbers_close(x[k], y[k], f"{path}.{k}")
    elif isinstance(x, list):
        assert len(x) == len(y), path
        for k, (u, v) in enumerate(zip(x, y)):
            numbers_close(u, v, f"{path}[{k}]")
    elif isinstance(x, float) and isinstance(y, float):
        assert math.isclose(x, y, rel_tol=1e-9, abs_tol=1e-9 * (1 + abs(x))), (path, x, y)
    else:
        assert x == y, (path, x, y)


def reports(ledger):
    check = check_record(check_ledger(ledger), "f")
    rolls = {}
    for name in [None] + [lo.name for lo in ledger.loadouts]:
        rolls[name] = record_from(ledger, rollup_state(resolve(ledger, name)), name)
    return check, rolls


# --------------------------------------------------------------------------- the properties


@settings(**SETTINGS)
@given(documents_in_any_order())
def test_ledger_writer_round_trips_every_table_in_any_order(case):
    doc, text = case
    ledger = ledger_from_data(tomllib.loads(text), source="in.toml")
    written = ledger_to_toml(ledger)
    assert_same_meaning(text, written)
    again = ledger_from_data(tomllib.loads(written), source="out.toml")
    numbers_close(reports(again), reports(ledger))
    assert ledger_to_toml(again) == written  # a no-op save of a file the program wrote: the same bytes


@settings(**{**SETTINGS, "max_examples": 25})
@given(documents_in_any_order(), st.sampled_from([None, "full", "light"]))
def test_snapshot_writer_round_trips(case, loadout):
    doc, text = case
    ledger = ledger_from_data(tomllib.loads(text), source="in.toml")
    snap_text = snapshot_text(ledger, loadout, source="in.toml", author="tester",
                              taken=dt.datetime(2026, 1, 1, tzinfo=dt.timezone.utc))
    snap = ledger_from_data(tomllib.loads(snap_text), source="snap.toml")
    verify_snapshot(snap, file="snap.toml")
    want = record_from(ledger, rollup_state(resolve(ledger, loadout)), loadout)
    got = record_from(snap, rollup_state(resolve(snap, None)), None)
    for key in ("mass_kg", "cg_m", "inertia_cg_kg_m2"):
        numbers_close(got[key], want[key])
    for name in TABLES_AS_WRITTEN:  # the user's own data and the change log pass through untouched
        if name in ("user", "change", "growth"):
            assert tomllib.loads(snap_text).get(name) == tomllib.loads(text).get(name)


@settings(**{**SETTINGS, "max_examples": 25})
@given(documents_in_any_order(), documents_in_any_order())
def test_journal_record_replays_to_the_same_ledger(case_a, case_b):
    a = ledger_from_data(tomllib.loads(case_a[1]), source="a.toml")
    b = ledger_from_data(tomllib.loads(case_b[1]), source="b.toml")
    rec = edit_record(a, b)
    if rec is None:
        assert a == b
        return
    # a record survives JSON (the journal's line format) and replays exactly
    assert replay(a, [json.loads(json.dumps(rec))]) == b


# --------------------------------------------------------------------------- the cases that started this


def test_plain_limit_after_an_envelope_is_kept_as_a_limit():
    """A [[limit]] after an [[envelope]] was once written where TOML reads it as a key of the envelope."""
    text = '''steelyard = 1
[[item]]
id = "a"
mass = 7.5
cg = [0.0, 0.0, 0.0]
[[envelope]]
name = "normal"
axis = "x"
points = [[-1.0, 1.0], [-1.0, 10.0], [1.0, 10.0], [1.0, 1.0]]
[[limit]]
name = "mtow"
max_mass = 7.0
'''
    ledger = ledger_from_data(tomllib.loads(text), source="t")
    written = ledger_to_toml(ledger)
    assert tomllib.loads(written)["limit"] == [{"name": "mtow", "max_mass": 7.0}]  # tomllib: the reference reading
    assert "limit" not in tomllib.loads(written)["envelope"][0]
    report = check_ledger(ledger_from_data(tomllib.loads(written), source="w"))
    assert not report.ok  # 7.5 kg over a 7.0 kg limit stays broken after the save


@pytest.mark.parametrize("text, words", [
    ('[[limits]]\nname = "mtow"\nmax_mass = 7.0\n', ("limits", "did you mean 'limit'")),
    ('[[envelopes]]\nname = "n"\naxis = "x"\npoints = []\n', ("envelopes", "did you mean 'envelope'")),
    ('[[envelope]]\nname = "n"\naxis = "x"\npoints = [[0, 1], [0, 2], [1, 2]]\nloadout = ["x"]\n',
     ("envelope 'n'", "loadout", "did you mean 'loadouts'")),
    ('[[limit]]\nname = "mtow"\nmax_mas = 7.0\n', ("limit 'mtow'", "max_mas", "did you mean 'max_mass'")),
    ('[[change]]\ntime = "2026-05-04T09:12:33Z"\nauthor = "a"\naction = "edit"\nd_mass_kg = 0.0\nreasn = "x"\n',
     ("change #1", "reasn", "did you mean 'reason'")),
    ('[[change]]\ntime = "2026-05-04T09:12:33Z"\nauthor = "a"\naction = "edit"\nd_mass_kg = 0.0\nrequst = "CR-1"\n',
     ("change #1", "requst", "did you mean 'request'")),
    ('[[item]]\nid = "b"\nmass = 1\ncg = [0, 0, 0]\nmaturty = "layout"\n', ("item 'b'", "did you mean 'maturity'")),
    ('[mac]\nlemac = 1.0\nlenght = 2.0\n', ("mac", "lenght", "did you mean 'length'")),
    ('[units]\nmas = "lb"\n', ("units", "did you mean 'mass'")),
    ('[weighing]\n[[weighing.point]]\nname = "l"\nat = [0, 0, 0]\nreading = 1\ntare = 0\ntear = 1\n',
     ("weighing", "tear", "did you mean 'tare'")),
])
def test_a_misspelt_table_or_key_is_an_error_with_a_hint(text, words):
    """A typo must not turn a limit off: unknown tables and keys are refused, naming table and key."""
    base = 'steelyard = 1\n[[item]]\nid = "a"\nmass = 1\ncg = [0, 0, 0]\n'
    with pytest.raises(SteelyardError) as e:
        ledger_from_data(tomllib.loads(base + text), source="typo.toml")
    message = str(e.value)
    assert message.startswith("typo.toml: ") and "\n" not in message
    for w in words:
        assert w in message, (w, message)


def test_user_data_anywhere_is_kept_verbatim():
    text = '''steelyard = 1
[user]
program = "demo"
reviewed = 2026-03-01
nested = { a = [1, 2.5, "x"], b = { c = true } }
[[item]]
id = "a"
mass = 1
cg = [0, 0, 0]
user = { part = "P-1", rev = 3 }
[[loadout]]
name = "x"
user = { by = "someone" }
[[envelope]]
name = "n"
axis = "x"
points = [[-1.0, 0.5], [-1.0, 2.0], [1.0, 2.0], [1.0, 0.5]]
user = { source = "manual" }
[[limit]]
name = "mtow"
max_mass = 2.0
user = { why = "placard" }
'''
    ledger = ledger_from_data(tomllib.loads(text), source="t")
    written = tomllib.loads(ledger_to_toml(ledger))
    original = tomllib.loads(text)  # the reference reading
    assert written["user"] == original["user"]
    assert written["item"][0]["user"] == original["item"][0]["user"]
    assert written["loadout"][0]["user"] == original["loadout"][0]["user"]
    assert written["envelope"][0]["user"] == original["envelope"][0]["user"]
    assert written["limit"][0]["user"] == original["limit"][0]["user"]


def test_an_old_change_log_reads_writes_and_reads_the_same():
    """A log written before the compact form (sub-table headers, nan margins, float noise) still reads,
    and a save keeps every value of it (tomllib is the reference reading; nan compared as nan)."""
    text = '''steelyard = 1
[[item]]
id = "a"
mass = 1
cg = [0, 0, 0]
[[envelope]]
name = "normal"
axis = "x"
points = [[-1.0, 0.5], [-1.0, 10.0], [1.0, 10.0], [1.0, 0.5]]

[[change]]
time = "2026-05-04T09:12:33Z"
author = "ana"
action = "edit"
item = "a"
summary = "edit a"
d_mass_kg = 0.2999999999999998
d_cg_m = [nan, nan, nan]

[change.d_margin_m]
normal = nan

[change.before]
id = "a"
mass_kg = 0.7000000000000002

[change.after]
id = "a"
mass_kg = 1.0
'''
    ledger = ledger_from_data(tomllib.loads(text), source="old.toml")
    written = ledger_to_toml(ledger)
    again = ledger_from_data(tomllib.loads(written), source="new.toml")
    a, b = tomllib.loads(text)["change"], tomllib.loads(written)["change"]
    assert json.dumps(a, sort_keys=True) == json.dumps(b, sort_keys=True)  # json spells nan as NaN both sides
    assert b[0]["d_mass_kg"] == 0.2999999999999998  # an old entry keeps its digits: a record is not rewritten
    assert ledger_to_toml(again) == written
