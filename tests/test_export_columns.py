"""`export --csv` and `--json`, written a column at a time, against outside references.

References:
- Python's csv module (an RFC 4180 reader) and json.loads parse the exports;
- tomllib reads the source ledger; unit factors are NIST SP 811's exact ones
  (1 lb = 0.45359237 kg, 1 in = 0.0254 m; support/units.py);
- a straightforward per-item formatter kept here restates the output rules: a number
  cell is the shortest of 12, 15, 16 and 17 significant digits that multiplies back
  to the SI value exactly (else an exact neighbour of the quotient within 4 ulps); a text
  cell gets one more apostrophe in front when, after any apostrophes, it starts with
  = + - @ TAB or CR (the OWASP CSV-injection list) and is quoted, quotes doubled, when it
  holds the separator, a quote, CR or LF or starts or ends with white space (RFC 4180
  §2.6-2.7; spaces are data); the JSON is json.dumps(indent=2, ensure_ascii=False)
  of each item's record, floats as float.__repr__ writes them.
The exports must equal the reference byte for byte on generated ledgers (tests/perf/make_ledger.py)
and on hostile ones (odd names, signed zeros, rotations, densities, unit strings).
"""

from __future__ import annotations

import csv
import importlib.util
import io
import json
import math
import random
import re
import tomllib
from fractions import Fraction
from pathlib import Path

import pytest

from steelyard.io.exchange.csv_write import ledger_to_csv
from steelyard.io.exchange.json_export import export_json
from steelyard.io.ledger.read import ledger_from_data
from support.paths import FIXTURES
from support.units import GAL, IN, LB

_spec = importlib.util.spec_from_file_location("_make_ledger", Path(__file__).parent / "perf" / "make_ledger.py")
make_ledger = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(make_ledger)

_GUARD = re.compile(r"'*[=+\-@\t\r]")  # OWASP list, restated
_TEXTS = ["", "plain", "=SUM(A1)", "'=x", "'quoted'", " lead", "trail ", "a,b", 'say "hi"', "two\nlines", "\tTab",
          "+1", "-", "@home", "\u00a0nbsp", "x\u2003", "semi;colon", "caf\u00e9", "\u2028ls", "\x1besc", "del\x7f",
          "back\\slash", "emoji \U0001F600", "''=y", "\r", "cr\rin"]
_GROUPS = ["a", "a/b", "=g", " sp", "c,d", 'q"', "x;y"]


def _toml_string(s: str) -> str:
    return json.dumps(s, ensure_ascii=False).replace("\x7f", "\\u007f")


def hostile_text(n: int, seed: int) -> str:
    """A ledger in lb and in with every v1 field exercised: odd texts, signed zeros, tiny and huge
    numbers, inertia (zeros too), shapes, rotations, densities, values written with units."""
    r = random.Random(seed)
    lines = ["steelyard = 1", "[units]", 'mass = "lb"', 'length = "in"', 'inertia = "lb*in**2"']
    for k in range(n):
        lines += ["[[item]]", f"id = {_toml_string(f'i{k}' + r.choice(['', '-x', '_é', ' sp']))}"]
        if r.random() < 0.7:
            lines.append(f"name = {_toml_string(r.choice(_TEXTS) if r.random() < 0.5 else f'Part {k}')}")
        if r.random() < 0.8:
            lines.append("group = " + _toml_string(r.choice(_GROUPS)))
        m = r.choice([r.uniform(0, 100), round(r.uniform(0, 100), 3), 0.0, 1e-7, 123456789.123, 1e30])
        lines.append(f'mass = "{round(m, 4)} kg"' if r.random() < 0.1 else f"mass = {m!r}")
        cg = [r.choice([r.uniform(-500, 500), round(r.uniform(-500, 500), 3), -0.0, 0.0, 1e-9, 1e17]) for _ in "xyz"]
        lines.append(f"cg = [{', '.join(map(repr, cg))}]")
        if r.random() < 0.2:
            lines.append(f"quantity = {r.randint(1, 12)}")
        p = r.random()
        if p < 0.3:
            a, b, c = (r.uniform(0.1, 10) for _ in "abc")
            prod = [r.choice([0.0, r.uniform(-0.1, 0.1)]) for _ in "abc"]
            lines.append(f"inertia = {{ xx = {b + c!r}, yy = {a + c!r}, zz = {a + b!r}, "
                         f"xy = {prod[0]!r}, xz = {prod[1]!r}, yz = {prod[2]!r} }}")
        elif p < 0.35:
            lines.append("inertia = { xx = 0.0, yy = 0.0, zz = 0.0 }")
        elif p < 0.5:
            lines.append(f'shape = {{ kind = "box", size = [{r.uniform(1, 9)!r}, {r.uniform(1, 9)!r}, {r.uniform(1, 9)!r}] }}')
        if p < 0.5 and r.random() < 0.3:
            lines.append(f'rotate = [["z", {r.uniform(-90, 90)!r}], ["x", 30.0]]')
        if r.random() < 0.1:
            lines.append("variable = true")
        if seed % 2 and r.random() < 0.2:
            lines.append(r.choice(['density = "6 lb/gal"', "density = 0.03", 'density = "1.2 g/cm**3"']))
    return "\n".join(lines) + "\n"


# ---------------------------------------------------------------------------------- the reference

def ref_number(si: float, factor: float) -> str:
    v = si / factor + 0.0
    for digits in (12, 15, 16, 17):
        t = f"{v:.{digits}g}"
        if float(t) * factor == si:
            return t
    up = down = v
    for _ in range(4):
        up, down = math.nextafter(up, math.inf), math.nextafter(down, -math.inf)
        for c in (up, down):
            if c * factor == si:
                return repr(c)
    return f"{v:.17g}"


def ref_text(text: str, sep: str) -> str:
    cell = "'" + text if _GUARD.match(text) else text
    if (sep in cell or '"' in cell or "\n" in cell or "\r" in cell
            or (cell and (cell[0].isspace() or cell[-1].isspace()))):
        return '"' + cell.replace('"', '""') + '"'
    return cell


def ref_csv_body(ledger, factors: dict, decimal_comma: bool) -> str:
    """One row per item, cell by cell (v1 columns, and density when an item has one)."""
    sep = ";" if decimal_comma else ","
    num = (lambda si, f: ref_number(si, f).replace(".", ",")) if decimal_comma else ref_number
    density = any(it.density is not None for it in ledger.items)
    own = ledger.arrays.own
    rows = []
    for i, it in enumerate(ledger.items):
        cells = [ref_text(it.id, sep), ref_text(it.name, sep), ref_text(it.group, sep),
                 num(it.mass, factors["mass"]), *(num(c, factors["length"]) for c in it.cg),
                 str(it.quantity), "true" if it.variable else "false"]
        if it.inertia is not None or it.shape is not None:
            t = own[i]
            cells += [num(float(x), factors["inertia"]) for x in (t[0, 0], t[1, 1], t[2, 2], -t[0, 1], -t[0, 2],
                                                                   -t[1, 2])]
        else:
            cells += [""] * 6
        if density:
            cells.append("" if it.density is None else num(it.density, factors["density"]))
        rows.append(sep.join(cells) + "\n")
    return "".join(rows)


def ref_items(ledger) -> list[dict]:
    own = ledger.arrays.own
    return [{"id": it.id, "name": it.name or it.id, "group": it.group, "mass_kg": it.mass, "quantity": it.quantity,
             "cg_m": list(it.cg), "variable": it.variable,
             "inertia_kg_m2": own[i].tolist() if (it.inertia is not None or it.shape is not None) else None,
             "density_kg_m3": it.density} for i, it in enumerate(ledger.items)]


def _ledger(text: str):
    return ledger_from_data(tomllib.loads(text), source="t.toml")


_LB, _IN = float(LB), float(IN)
FILE = {"mass": _LB, "length": _IN, "inertia": float(LB * IN * IN)}
SI = {"mass": 1.0, "length": 1.0, "inertia": 1.0}
#: kg/m³ per unit (NIST SP 811: 1 US gal = 231 in³; 1 L = 1 dm³)
DENSITY = {"lb/gal": LB / GAL, "g/cm**3": Fraction(1000), "kg/L": Fraction(1000), "lb/in**3": LB / IN ** 3}
_SOURCES = [("generated", lambda s: make_ledger.ledger_text(400, seed=s)), ("hostile", lambda s: hostile_text(120, s))]


@pytest.mark.parametrize("kind,seed", [(k, s) for k, _ in _SOURCES for s in range(4)])
@pytest.mark.parametrize("system,decimal_comma", [(None, False), (None, True), ("si", False)])
def test_csv_equals_the_per_item_reference(kind, seed, system, decimal_comma):
    ledger = _ledger(dict(_SOURCES)[kind](seed))
    text = ledger_to_csv(ledger, system=system, decimal_comma=decimal_comma)
    header, _, body = text.partition("\n")
    sep = ";" if decimal_comma else ","
    factors = dict(SI if system == "si" else FILE)
    density = [h for h in header.split(sep) if h.startswith("density [")]
    if density:  # the unit the file's first density was written in (or the system's): its exact factor
        factors["density"] = float(DENSITY[density[0][len("density ["):-1]])
    assert body == ref_csv_body(ledger, factors, decimal_comma)
    units = ["kg", "m", "kg*m**2"] if system == "si" else ["lb", "in", "lb*in**2"]
    assert header.split(sep)[:15] == ["id", "name", "group", f"mass [{units[0]}]", *(f"{c} [{units[1]}]" for c in "xyz"),
                                      "quantity", "variable", *(f"{c} [{units[2]}]" for c in
                                                                ("xx", "yy", "zz", "xy", "xz", "yz"))]


@pytest.mark.parametrize("seed", range(3))
def test_csv_read_back_by_the_csv_module_matches_tomllib(seed):
    source = make_ledger.ledger_text(300, seed=seed)
    text = ledger_to_csv(_ledger(source))
    rows = list(csv.reader(io.StringIO(text, newline="")))
    header, body = rows[0], rows[1:]
    col = {h.split(" [")[0]: j for j, h in enumerate(header)}
    items = tomllib.loads(source)["item"]
    assert len(body) == len(items)
    for cells, item in zip(body, items):
        assert cells[col["id"]] == item["id"] and cells[col["name"]] == item["name"]
        # the cell times the exact factor is the file's value times it, to the last digit or so
        assert Fraction(cells[col["mass"]]) * LB == pytest.approx(Fraction(repr(item["mass"])) * LB, rel=1e-15)
        for c, v in zip("xyz", item["cg"]):
            assert float(cells[col[c]]) == pytest.approx(v, rel=1e-14, abs=1e-12)
        assert int(cells[col["quantity"]]) == item.get("quantity", 1)
        assert cells[col["variable"]] == ("true" if item.get("variable") else "false")
        if "inertia" in item:
            for c in ("xx", "yy", "zz", "xy", "xz", "yz"):
                assert float(cells[col[c]]) == pytest.approx(item["inertia"].get(c, 0.0), rel=1e-13, abs=1e-12)
        elif "shape" not in item:
            assert all(cells[col[c]] == "" for c in ("xx", "yy", "zz", "xy", "xz", "yz"))


@pytest.mark.parametrize("kind,seed", [(k, s) for k, _ in _SOURCES for s in range(4)])
def test_json_items_equal_the_per_item_reference(kind, seed):
    ledger = _ledger(dict(_SOURCES)[kind](seed))
    text = export_json(ledger, source="t.toml", samples=200)
    data = json.loads(text)
    assert data["items"] == ref_items(ledger)
    # the bytes are json.dumps(indent=2) of the record (floats by float.__repr__; -0.0 stays -0.0)
    data["items"] = ref_items(ledger)
    assert text == json.dumps(data, indent=2, ensure_ascii=False) + "\n"


@pytest.mark.parametrize("seed", range(2))
def test_json_values_are_the_source_in_si(seed):
    source = make_ledger.ledger_text(300, seed=seed)
    data = json.loads(export_json(_ledger(source), source="t.toml", samples=200))
    items = tomllib.loads(source)["item"]
    assert [it["id"] for it in data["items"]] == [it["id"] for it in items]
    for got, item in zip(data["items"], items):
        assert got["mass_kg"] == pytest.approx(float(Fraction(repr(item["mass"])) * LB), rel=1e-15)
        assert got["cg_m"] == pytest.approx([float(Fraction(repr(c)) * IN) for c in item["cg"]], rel=1e-15)
        assert got["quantity"] == item.get("quantity", 1) and got["variable"] is item.get("variable", False)
        if "inertia" in item:
            i = item["inertia"]
            k = float(LB * IN * IN)
            # the tensor: moments on the diagonal, minus the products (integrals) off it
            want = [[i["xx"], -i.get("xy", 0.0), -i.get("xz", 0.0)], [-i.get("xy", 0.0), i["yy"], -i.get("yz", 0.0)],
                    [-i.get("xz", 0.0), -i.get("yz", 0.0), i["zz"]]]
            for g_row, w_row in zip(got["inertia_kg_m2"], want):
                assert g_row == pytest.approx([w * k for w in w_row], rel=1e-13, abs=1e-15)
        elif "shape" not in item:
            assert got["inertia_kg_m2"] is None
        assert got["density_kg_m3"] is None


@pytest.mark.parametrize("path", sorted(p for p in FIXTURES.rglob("*.toml") if "bad" not in p.parts),
                         ids=lambda p: p.name)
def test_fixtures_round_trip_through_the_stdlib_readers(path):
    from steelyard.io.ledger.file import open_ledger

    ledger = open_ledger(path).ledger
    text = export_json(ledger, source=str(path), samples=200)
    assert text == json.dumps(json.loads(text), indent=2, ensure_ascii=False) + "\n"
    for decimal_comma in (False, True):
        sep = ";" if decimal_comma else ","
        body = ledger_to_csv(ledger, decimal_comma=decimal_comma).partition("\n")[2]
        rows = list(csv.reader(io.StringIO(body, newline=""), delimiter=sep))
        assert [r[0] for r in rows] == [ref_text(it.id, sep).strip('"') for it in ledger.items]
        if ledger.units.mass == "lb" and ledger.units.length == "in" and ledger.units.inertia == "lb*in**2" \
                and not any(it.density is not None for it in ledger.items):
            ref = list(csv.reader(io.StringIO(ref_csv_body(ledger, FILE, decimal_comma), newline=""),
                                  delimiter=sep))
            assert [r[:16] for r in rows] == [r[:16] for r in ref]


def test_nul_in_a_name_stops_the_csv_naming_the_item():
    from steelyard.core.errors import SteelyardError

    text = hostile_text(5, 0) + '[[item]]\nid = "bad"\nname = "a\\u0000b"\nmass = 1.0\ncg = [0.0, 0.0, 0.0]\n'
    with pytest.raises(SteelyardError, match="NUL") as info:
        ledger_to_csv(_ledger(text))
    assert "'bad'" in str(info.value) and "name" in str(info.value)
