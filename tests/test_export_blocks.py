"""`export --json` and `--csv` written a block of rows at a time, against outside references.

References:
- json.dumps(indent=2, ensure_ascii=False) of each item's record (the per-item reference
  `ref_items` of test_export_columns) and json.loads of the output;
- the per-item CSV formatter `ref_csv_body` of test_export_columns and the stdlib csv reader;
- shortest round trip (IEEE 754 binary64; Steele & White, "How to print floating-point numbers
  accurately"): every number the JSON writes reads back as the very float, and no text with
  fewer significant digits does (`%.{p}g` for p below its digit count, checked here).
Blocks are made tiny so that block edges fall between and right on the rows written apart
(keys beyond v1, non-finite values), the rows with an own tensor and the rows without.
"""

from __future__ import annotations

import csv
import io
import json
import re
import tomllib

import pytest

import steelyard.io.exchange.csv_rows as csv_rows
import steelyard.io.exchange.json_items as json_items
from steelyard.io.durability.atomic import write_atomic
from steelyard.io.exchange.csv_write import csv_parts, ledger_to_csv
from steelyard.io.exchange.json_export import export_json, export_json_parts
from steelyard.io.ledger.read import ledger_from_data
from test_export_columns import FILE, hostile_text, make_ledger, ref_csv_body, ref_items

#: keys beyond v1 (each makes its row one written apart in the JSON and cell by cell in the CSV)
_MORE = ['maturity = "estimated"', "growth = 0.125",
         'tolerance = { mass = 0.05, cg = [0.01, 0.02, 0.0], kind = "sigma" }', 'user = { part = "R-100", rev = 3 }', "removable = true"]


def _with_more(text: str, every: int) -> str:
    """`text` with one key beyond v1 added to every `every`-th item (cycling through `_MORE`)."""
    out, k = [], 0
    for line in text.split("\n"):
        out.append(line)
        if line == "[[item]]":
            k += 1
        elif k and k % every == 0 and line.startswith("mass = "):
            out.append(_MORE[(k // every) % len(_MORE)])
    return "\n".join(out)


def _ledger(text: str):
    return ledger_from_data(tomllib.loads(text), source="t.toml")


_SOURCES = {
    "generated": lambda s: make_ledger.ledger_text(150, seed=s),
    "hostile": lambda s: hostile_text(90, s),
    "with keys beyond v1": lambda s: _with_more(make_ledger.ledger_text(120, seed=s), 3 + s),
    "hostile with keys beyond v1": lambda s: _with_more(hostile_text(90, s), 4 + s),
}


@pytest.fixture(params=[1, 2, 7, 64, 4096], ids=lambda b: f"block{b}")
def block(request, monkeypatch):
    monkeypatch.setattr(json_items, "BLOCK", request.param)
    monkeypatch.setattr(csv_rows, "BLOCK", request.param)
    return request.param


_FLOAT = re.compile(r"-?\d+(?:\.\d+)?(?:e[+-]?\d+)?")


def _digits(text: str) -> int:
    """Significant digits of a decimal text."""
    mantissa = text.lstrip("-").partition("e")[0].replace(".", "").lstrip("0")
    return len(mantissa.rstrip("0")) or 1


@pytest.mark.parametrize("kind", list(_SOURCES))
@pytest.mark.parametrize("seed", range(2))
def test_json_in_blocks_is_json_dumps_of_the_reference(block, kind, seed):
    ledger = _ledger(_SOURCES[kind](seed))
    parts = list(export_json_parts(ledger, source="t.toml", samples=200))
    text = "".join(parts)
    assert text == export_json(ledger, source="t.toml", samples=200)
    data = json.loads(text)
    plain = [r for r in data["items"] if set(r) == {"id", "name", "group", "mass_kg", "quantity", "cg_m", "variable",
                                                        "inertia_kg_m2", "density_kg_m3"}]
    if "beyond" not in kind:
        assert data["items"] == ref_items(ledger)
        data["items"] = ref_items(ledger)
    else:  # rows with more keys carry them; their v1 fields are the reference's all the same
        ref = ref_items(ledger)
        assert len(plain) < len(ref)
        assert [{k: r[k] for k in ref[0]} for r in data["items"]] == ref
    # the bytes are json.dumps(indent=2) of the record (floats by float.__repr__; -0.0 stays -0.0)
    assert text == json.dumps(data, indent=2, ensure_ascii=False) + "\n"


@pytest.mark.parametrize("seed", range(3))
def test_json_numbers_are_the_shortest_exact_texts(seed):
    ledger = _ledger(hostile_text(60, seed) if seed else make_ledger.ledger_text(200, seed=seed))
    text = export_json(ledger, source="t.toml", samples=200)
    assert json.loads(text)["items"] == ref_items(ledger)  # each text reads back as the very float
    items = text[text.index('"items": ['):text.index('\n  ],\n  "rollup"')]
    for line in items.split("\n"):
        token = line.strip().rstrip(",").rpartition(": ")[2]
        if not _FLOAT.fullmatch(token) or not ("." in token or "e" in token):  # floats only (not quantities)
            continue
        x = float(token)
        digits = _digits(token)
        assert digits <= 17  # 17 significant digits always tell two binary64 floats apart
        for p in range(1, digits):  # no text with fewer digits reads back as x
            assert float(f"{x:.{p}g}") != x, (token, p)


@pytest.mark.parametrize("kind", list(_SOURCES))
@pytest.mark.parametrize("decimal_comma", [False, True])
def test_csv_in_blocks_is_the_reference_and_reads_back(block, kind, decimal_comma):
    ledger = _ledger(_SOURCES[kind](1))
    parts = list(csv_parts(ledger, decimal_comma=decimal_comma))
    text = "".join(parts)
    assert text == ledger_to_csv(ledger, decimal_comma=decimal_comma)
    sep = ";" if decimal_comma else ","
    header, _, body = text.partition("\n")
    rows = list(csv.reader(io.StringIO(body, newline=""), delimiter=sep))
    assert len(rows) == len(ledger.items)
    width = len(header.split(sep))
    assert all(len(r) == width for r in rows)
    if "beyond" not in kind and not any(it.density is not None for it in ledger.items):
        assert body == ref_csv_body(ledger, FILE, decimal_comma)
    else:  # the v1 cells are the reference's (its density cells are not looked at); the rest: keys beyond v1
        factors = {**FILE, "density": 1.0}
        ref = list(csv.reader(io.StringIO(ref_csv_body(ledger, factors, decimal_comma), newline=""), delimiter=sep))
        assert [r[:15] for r in rows] == [r[:15] for r in ref]


def test_write_atomic_writes_pieces_as_one_file(tmp_path):
    target = tmp_path / "out.json"
    target.write_bytes(b"old")
    pieces = [b"[\n", "caf\u00e9 \u2028".encode(), b"", b"x" * 100_000, b"\n]"]
    write_atomic(target, pieces)
    assert target.read_bytes() == b"".join(pieces)
    write_atomic(target, tuple(pieces[:2]))
    assert target.read_bytes() == b"".join(pieces[:2])
