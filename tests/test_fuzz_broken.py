"""Broken ledgers: the loader loads them or raises SteelyardError, never anything else.

Valid texts (the fixtures, generated perf ledgers, a hand-written ledger that
uses every feature, and the generator of test_fuzz_valid.py) are damaged by
hypothesis: keys dropped, values of the wrong type, random bytes, truncation,
deep nesting, huge numbers, unicode garbage. For every result:

- `open_ledger` returns a ledger or raises `SteelyardError` whose str() is one
  line (str.splitlines, the standard library's notion of a line) without
  terminal control characters;
- whatever loads also rolls up under every loadout, saves, and the saved text
  loads again (a file the program wrote must open).

Inputs that made the program fail are pinned in KNOWN_CRASHERS at the end.
"""

from __future__ import annotations

import atexit
import copy
import importlib.util
import re
import shutil
import tempfile
import tomllib
from pathlib import Path

import pytest
import tomli_w
from hypothesis import given, settings
from hypothesis import strategies as st

from steelyard.core.errors import SteelyardError
from steelyard.core.loading.loadout import resolve
from steelyard.core.physics.rollup import rollup_state
from steelyard.core.limits.status import envelope_results
from steelyard.io.ledger.file import open_ledger
from steelyard.io.ledger.read import ledger_from_data
from steelyard.io.ledger.write import ledger_to_toml
from steelyard.io.ledger.toml_read import parse_toml

HERE = Path(__file__).resolve().parent


def _load_module(name: str, path: Path):
    spec = importlib.util.spec_from_file_location(name, path)
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


_valid = _load_module("_fuzz_valid_strategies", HERE / "test_fuzz_valid.py")
_make = _load_module("_make_ledger", HERE / "perf" / "make_ledger.py")
examples, FUZZ = _valid.examples, _valid.FUZZ

FEATURES = '''steelyard = 1
[units]
mass = "lb"
length = "in"
inertia = "lb*in**2"
density = "lb/gal"
[frame]
x = "aft"
y = "right"
z = "up"
[[item]]
id = "radio"
name = "Radio"
group = "avionics/com"
mass = 2.3
cg = [142, 0, "1 ft"]
quantity = 2
inertia = { xx = 1.5, yy = 2.0, zz = 2.5, xy = 0.1 }
[[item]]
id = "tank"
mass = "120 lb"
cg = [95, -10, 20]
variable = true
density = 6.0
shape = { kind = "cylinder", radius = 6, length = 30, axis = "y" }
rotate = [["z", 10.0], ["x", -5]]
note = "kept"
[[item]]
id = "shell"
mass = 4
cg = ["2 m", 0, 0]
shape = { kind = "tube", outer_radius = 2, inner_radius = 1.5, length = 10 }
[[item]]
id = "pilot"
mass = 250
cg = [120, 0, 30]
variable = true
[[loadout]]
name = "base"
set = { tank = 0.5, pilot = "82 kg" }
[[loadout]]
name = "trip"
base = "base"
[loadout.set]
tank = "10 gal"
[[envelope]]
name = "normal"
axis = "x"
points = [[100, 300], [100, 900], [160, 900], [160, 300]]
[user.history]
changes = [{ when = 2024-05-01T10:00:00Z, who = "ab", what = "added radio" }]
'''

FIXTURE_TEXTS = [p.read_text(encoding="utf-8") for p in sorted((HERE.parent / "fixtures").glob("*.toml"))]
SMALL_TEXTS = [FEATURES, 'steelyard = 1\n', 'steelyard = 1\n[[item]]\nid = "a"\nmass = 1\ncg = [0, 0, 0]\n',
               _make.ledger_text(2, 1), _make.ledger_text(6, 2)]
POOL = FIXTURE_TEXTS + SMALL_TEXTS
# Small texts twice as often as the (larger, slower) fixtures: more cases per second, same variety.
TEXTS = st.one_of(st.sampled_from(SMALL_TEXTS), st.sampled_from(SMALL_TEXTS), st.sampled_from(FIXTURE_TEXTS))
_PARSED = {t: tomllib.loads(t) for t in POOL}  # tomllib as the reference reader; copied per case


def parsed(text: str) -> dict:
    return copy.deepcopy(_PARSED[text])
_TMP = Path(tempfile.mkdtemp(prefix="steelyard-fuzz-"))
atexit.register(shutil.rmtree, _TMP, ignore_errors=True)
_CONTROL = re.compile(r"[\x00-\x1f\x7f-\x9f]")


def check_bytes(data: bytes, name: str = "fuzz.toml") -> None:
    """The contract for any file content: load or a one-line SteelyardError; what loads, works."""
    _TMP.mkdir(exist_ok=True)  # (a cleaner elsewhere may have removed it mid-run)
    path = _TMP / name
    path.unlink(missing_ok=True)  # a fresh file: rewriting in place makes ext4 flush it (auto_da_alloc)
    path.write_bytes(data)
    try:
        loaded = open_ledger(path)
    except SteelyardError as exc:
        message = str(exc)
        assert message and len(message.splitlines()) == 1, repr(message)
        assert not _CONTROL.search(message), repr(message)  # no raw escapes reach a terminal
        return
    ledger = loaded.ledger
    for name_ in [None] + [lo.name for lo in ledger.loadouts]:
        try:  # a roll-up that overflows is refused naming the item, like any bad input
            mp = rollup_state(resolve(ledger, name_))
            envelope_results(ledger, mp)
        except SteelyardError as exc:
            assert len(str(exc).splitlines()) == 1
            continue
    text = ledger_to_toml(ledger)
    ledger_from_data(parse_toml(text, source="resaved"), source="resaved")


def check_text(text: str) -> None:
    check_bytes(text.encode("utf-8", "surrogatepass"))


# ------------------------------------------------------------ value helpers
TOML_VALUES = st.recursive(
    st.one_of(st.text(max_size=12), st.integers(-2**63, 2**63 - 1), st.booleans(),
              st.floats(allow_nan=True, allow_infinity=True), st.datetimes(), st.dates(), st.times(),
              st.sampled_from(["41.5 lb", "3 ft 2 in", "kg", "", "-1 kg", "1e999 kg", "0.8 slug*ft**2",
                               "fwd", "x", "box", "30 gal", "nan"])),
    lambda inner: st.one_of(st.lists(inner, max_size=4), st.dictionaries(st.text(max_size=6), inner, max_size=4)),
    max_leaves=8)


def paths(doc, prefix=()):
    """Every key path in a parsed document (tables and arrays both)."""
    if isinstance(doc, dict):
        for k, v in doc.items():
            yield prefix + (k,)
            yield from paths(v, prefix + (k,))
    elif isinstance(doc, list):
        for i, v in enumerate(doc):
            yield prefix + (i,)
            yield from paths(v, prefix + (i,))


def parent_of(doc, path):
    for step in path[:-1]:
        doc = doc[step]
    return doc


# -------------------------------------------------------------- the fuzzers
@settings(max_examples=examples(1500), **FUZZ)
@given(TEXTS, st.data())
def test_truncated_text(text, data):
    data_bytes = text.encode("utf-8")
    cut = data.draw(st.integers(0, len(data_bytes)))
    check_bytes(data_bytes[:cut])  # a cut may split a UTF-8 sequence too


EDIT = st.tuples(st.floats(0, 1), st.sampled_from(["insert", "replace", "delete"]), st.binary(min_size=1, max_size=4))


@settings(max_examples=examples(2000), **FUZZ)
@given(TEXTS, st.lists(EDIT, min_size=1, max_size=8))
def test_random_bytes(text, edits):
    b = bytearray(text.encode("utf-8"))
    for where, how, chunk in edits:
        i = int(where * len(b))
        if how == "insert":
            b[i:i] = chunk
        elif how == "replace":
            b[i:i + len(chunk)] = chunk
        else:
            del b[i:i + len(chunk)]
    check_bytes(bytes(b))


@settings(max_examples=examples(1000), **FUZZ)
@given(TEXTS, st.lists(st.floats(0, 1), min_size=1, max_size=3))
def test_dropped_keys(text, picks):
    doc = parsed(text)
    for pick in picks:
        every = list(paths(doc))
        if not every:
            break
        path = every[int(pick * (len(every) - 1))]
        del parent_of(doc, path)[path[-1]]
    check_text(tomli_w.dumps(doc))


@settings(max_examples=examples(1000), **FUZZ)
@given(TEXTS, st.floats(0, 1), TOML_VALUES)
def test_wrong_types(text, pick, value):
    doc = parsed(text)
    every = list(paths(doc))
    path = every[int(pick * (len(every) - 1))]
    parent_of(doc, path)[path[-1]] = value
    check_text(tomli_w.dumps(doc))


_NUMBER = re.compile(r"(?<![\w.\"-])-?\d+(?:\.\d+)?(?:[eE][-+]?\d+)?(?![\w.\"])")
HUGE = st.one_of(st.sampled_from(["1e308", "-1e308", "1.7976931348623157e308", "1e309", "-1e400", "1e-400",
                                  "5e-324", "9223372036854775807", "-9223372036854775808",
                                  "9223372036854775808", "0x7fffffffffffffff", "inf", "-inf", "nan", "-0.0",
                                  "1_000_000_000_000", "1e200", "1e155", "1e-200"]),
                 st.integers(300, 5000).map(lambda k: "1" + "0" * k),
                 st.integers(-5000, 5000).map(lambda e: f"1e{e}"))


@settings(max_examples=examples(1000), **FUZZ)
@given(TEXTS, st.lists(st.tuples(st.floats(0, 1), HUGE), min_size=1, max_size=4))
def test_huge_numbers(text, swaps):
    spots = [m.span() for m in _NUMBER.finditer(text)]
    if not spots:
        check_text(text)
        return
    chosen = sorted({int(w * (len(spots) - 1)): v for w, v in swaps}.items(), reverse=True)
    for k, value in chosen:  # from the end, so earlier offsets stay valid
        a, b = spots[k]
        text = text[:a] + value + text[b:]
    check_text(text)


NESTS = st.sampled_from(["array", "inline", "dotted", "header", "mixed"])


def nested(kind: str, depth: int) -> str:
    if kind == "array":
        return "x = " + "[" * depth + "1" + "]" * depth
    if kind == "inline":
        return "x = " + "{a = " * depth + "1" + "}" * depth
    if kind == "dotted":
        return ".".join(["a"] * depth) + " = 1"
    if kind == "header":
        return "[" + ".".join(["a"] * depth) + "]\nb = 1"
    return "x = " + "[{a = " * (depth // 2) + "1" + "}]" * (depth // 2)


@settings(max_examples=examples(300), **FUZZ)
@given(TEXTS, NESTS, st.one_of(st.integers(1, 400), st.integers(400, 5000)), st.floats(0, 1),
       st.sampled_from(["x", "mass", "cg", "inertia", "shape", "set"]))
def test_deep_nesting(text, kind, depth, where, key):
    lines = text.splitlines()
    at = int(where * len(lines))
    snippet = nested(kind, depth)
    if key != "x" and kind in ("array", "inline", "mixed"):
        snippet = key + snippet[1:]
    check_text("\n".join(lines[:at] + [snippet] + lines[at:]) + "\n")


GARBAGE = st.text(st.characters(codec="utf-8"), min_size=1, max_size=12) | st.sampled_from(
    ["\ufeff", "\u202e", "\u0301" * 20, "\x1b[31m", "\x1b]0;t\x07", "\u2028", "\x85", "\x00", "\r", "\t",
     "\U0001F680", "表" * 8, "\ud7ff", "\uffff", "[b]x[/b]", '"', "'''", '"""', "\\u0000", "\\U0010FFFF"])


@settings(max_examples=examples(1500), **FUZZ)
@given(TEXTS, st.lists(st.tuples(st.floats(0, 1), GARBAGE, st.booleans()), min_size=1, max_size=4))
def test_unicode_garbage(text, inserts):
    for where, junk, inside_string in inserts:
        if inside_string:  # into an existing string value, where it must be read or refused cleanly
            quotes = [m.end() - 1 for m in re.finditer(r'= "', text)]
            if quotes:
                i = quotes[int(where * (len(quotes) - 1))] + 1
                text = text[:i] + junk + text[i:]
                continue
        i = int(where * len(text))
        text = text[:i] + junk + text[i:]
    check_text(text)


MUTATIONS = st.sampled_from(["truncate", "bytes", "drop", "type"])


@settings(max_examples=examples(300), **FUZZ)
@given(_valid.ledgers(max_items=5), MUTATIONS, st.floats(0, 1), TOML_VALUES, st.binary(min_size=1, max_size=3))
def test_mutated_generated_ledgers(case, how, pick, value, chunk):
    doc, _ = case
    if how in ("drop", "type"):
        every = list(paths(doc))
        path = every[int(pick * (len(every) - 1))]
        if how == "drop":
            del parent_of(doc, path)[path[-1]]
        else:
            parent_of(doc, path)[path[-1]] = value
        check_text(tomli_w.dumps(doc))
        return
    b = tomli_w.dumps(doc).encode("utf-8")
    i = int(pick * len(b))
    check_bytes(b[:i] if how == "truncate" else b[:i] + chunk + b[i + len(chunk):])


# ------------------------------------------- minimal inputs that broke it
_ONE = 'steelyard = 1\n[[item]]\nid = "a"\nmass = {mass}\ncg = {cg}\n{more}\n'
_BIG = "1" + "0" * 400  # an integer beyond the float range (TOML readers may accept it)
KNOWN_CRASHERS = {
    # OverflowError: int too large to convert to float (ledger_read puts the int into a float array)
    "int-beyond-float-mass": _ONE.format(mass=_BIG, cg="[0, 0, 0]", more=""),
    "int-beyond-float-cg": _ONE.format(mass="1", cg=f"[{_BIG}, 0, 0]", more=""),
    "int-beyond-float-quantity": _ONE.format(mass="1", cg="[0, 0, 0]", more=f"quantity = {_BIG}"),
    "int-beyond-float-inertia": _ONE.format(mass="1", cg="[0, 0, 0]", more=f"inertia = {{ xx = {_BIG}, yy = 1, zz = 1 }}"),
    "int-beyond-float-shape": _ONE.format(mass="1", cg="[0, 0, 0]", more=f'shape = {{ kind = "sphere", radius = {_BIG} }}'),
    "int-beyond-float-rotate": _ONE.format(mass="1", cg="[0, 0, 0]",
                                           more=f'shape = {{ kind = "sphere", radius = 1 }}\nrotate = [["x", {_BIG}]]'),
    "int-beyond-float-density": _ONE.format(mass="1", cg="[0, 0, 0]", more=f"variable = true\ndensity = {_BIG}"),
    "int-beyond-float-envelope": f'steelyard = 1\n[[envelope]]\nname = "e"\naxis = "x"\npoints = [[{_BIG}, 1], [2, 2], [3, 1]]\n',
    # OverflowError (34, 'Numerical result out of range'): float ** 2 in core/shapes.py
    "shape-radius-squared-overflows": _ONE.format(mass="1", cg="[0, 0, 0]", more='shape = { kind = "sphere", radius = 1e200 }'),
    # RecursionError when saving: the loader keeps a deep value the writer (tomli-w) cannot write
    "deep-array-saves": "steelyard = 1\nx = " + "[" * 300 + "]" * 300 + "\n",
    "deep-table-saves": "steelyard = 1\n[" + ".".join(["a"] * 5000) + "]\n",
    # OverflowError at roll-up: core/tank.py reads cg_table through units.to_si, which does float(int)
    "int-beyond-float-cg-table": _ONE.format(mass="1", cg="[0, 0, 0]",
                                             more=f"variable = true\ncg_table = [[0.0, {_BIG}, 0.0, 0.0], [1.0, 0.0, 0.0, 0.0]]"),
    # the saved file does not load: an unknown top-level *value* (not a table) is written after the
    # last table, so it lands inside [frame] (or the last [[item]], see test_fuzz_valid)
    "top-level-value-saves-into-frame": "steelyard = 1\nrevision = 3\n",
    "top-level-value-clashes-on-save": ('steelyard = 1\nname = "x"\n[[envelope]]\nname = "e"\naxis = "x"\n'
                                        "points = [[1, 1], [1, 2], [2, 2]]\n"),
    # RecursionError when saving: a deep value in an envelope's or loadout's unknown keys (the item
    # and top-level cases are refused at load time; these two are kept and break the writer)
    "deep-value-in-envelope-saves": ('steelyard = 1\n[[envelope]]\nname = "e"\naxis = "x"\n'
                                     'points = [[1, 1], [1, 2], [2, 2]]\n' + ".".join(["a"] * 1200) + " = 1\n"),
    "deep-value-in-loadout-saves": 'steelyard = 1\n[[loadout]]\nname = "l"\n' + ".".join(["a"] * 1200) + " = 1\n",
    # TypeError: unhashable type: 'list' (ledger_read._shape: `kind not in SHAPE_PARAMS`)
    "shape-kind-is-a-list": _ONE.format(mass="1", cg="[0, 0, 0]", more="shape = { kind = [] }"),
    # ValueError from tomllib itself (Python's 4300-digit int limit), not a TOMLDecodeError
    "int-of-4301-digits": _ONE.format(mass="1" + "0" * 4300, cg="[0, 0, 0]", more=""),
    # a user's key goes into the message raw: \x1e splits the line, ESC reaches the terminal
    "control-char-units-key": 'steelyard = 1\n[units]\n"\\u001e" = 0\n',
    "escape-in-loadout-key": _ONE.format(mass="1", cg="[0, 0, 0]",
                                         more='[[loadout]]\nname = "l"\nset = { "\\u001b[2J" = 1 }'),
    # loads, but saving raises UnitError: the unit part of "\ufeff6 lb/gal" is misread as the whole text
    "bom-before-density-number": _ONE.format(mass="1", cg="[0, 0, 0]",
                                             more='variable = true\ndensity = "\ufeff6 lb/gal"'),
}


@pytest.mark.parametrize("text", list(KNOWN_CRASHERS.values()), ids=list(KNOWN_CRASHERS))
def test_known_crashers(text):
    check_text(text)

