"""A CSV in other units carries a tank's CG table; a ledger written to another file keeps its source's layout.

Unit factors are NIST SP 811's exact ones (1 in = 0.0254 m). The expected
texts are the fixture's own bytes and its numbers as tomllib reads them;
the CSV is read with the standard library's csv module.
"""

from __future__ import annotations

import csv
import math
import tomllib

from support.cli import run_cli
from support.paths import FIXTURES

IN = 0.0254  # m per inch, exact (NIST SP 811)
TANKS = FIXTURES / "trainer-overweight.toml"  # fuel-aft: a cg_table in inches


def _tables(path) -> dict[str, list]:
    return {it["id"]: it["cg_table"] for it in tomllib.loads(path.read_text())["item"] if "cg_table" in it}


def _within_2_ulps(a: float, b: float) -> bool:
    return abs(a - b) <= 2 * math.ulp(max(abs(a), abs(b), 1e-300))


def test_a_tank_table_in_a_csv_in_si_is_in_metres(tmp_path):
    out = tmp_path / "si.csv"
    code, _, err = run_cli("export", TANKS, "--csv", out, "--units", "si")
    assert code == 0, err
    rows = {r["id"]: r for r in csv.DictReader(out.open(newline=""))}
    source = _tables(TANKS)
    assert source  # the fixture has one
    for ident, table in source.items():
        got = tomllib.loads(f"v = {rows[ident]['other']}")["v"]["cg_table"]
        assert len(got) == len(table)
        for want, row in zip(table, got):
            assert row[0] == want[0]
            assert all(_within_2_ulps(x, w * IN) for x, w in zip(row[1:], want[1:])), (want, row)


def test_a_tank_table_survives_si_and_back(tmp_path):
    csv_si, new, merged = tmp_path / "si.csv", tmp_path / "new.toml", tmp_path / "merged.toml"
    assert run_cli("export", TANKS, "--csv", csv_si, "--units", "si")[0] == 0
    code, _, err = run_cli("import", csv_si, "-o", new)  # a new ledger in the CSV's units (kg, m)
    assert code == 0, err
    source = _tables(TANKS)
    for ident, table in _tables(new).items():
        assert all(_within_2_ulps(x, w * IN) for want, row in zip(source[ident], table)
                   for x, w in zip(row[1:], want[1:]))
    # merged back into the ledger in inches, nothing has changed: the file's own bytes (the table's
    # numbers come back digit for digit)
    code, out, err = run_cli("import", csv_si, "--into", TANKS, "-o", merged)
    assert code == 0, err
    assert "0 changed" in out
    assert merged.read_bytes() == TANKS.read_bytes()


def test_a_merge_written_to_another_file_keeps_the_source_layout(tmp_path):
    # the comments and the text of untouched values are what people wrote in the source: a merge
    # written elsewhere keeps them as a merge in place does (the source's bytes are the reference)
    src = FIXTURES / "trainer.toml"
    items, merged = tmp_path / "items.csv", tmp_path / "merged.toml"
    assert run_cli("export", src, "--csv", items)[0] == 0
    code, _, err = run_cli("import", items, "--into", src, "-o", merged)
    assert code == 0, err
    assert merged.read_bytes() == src.read_bytes()
    # one mass changed in the CSV: that line changes, a change-log entry is added, every comment stays
    rows = list(csv.reader(items.open(newline="")))
    col = rows[0].index("mass [lb]")
    at = next(k for k, r in enumerate(rows) if r[0] == "wing-l")
    rows[at][col] = "100.5"
    with items.open("w", newline="") as f:
        csv.writer(f).writerows(rows)
    code, _, err = run_cli("import", items, "--into", src, "-o", merged, "--force")
    assert code == 0, err
    comments = [line for line in src.read_text().splitlines() if line.lstrip().startswith("#")]
    assert [line for line in merged.read_text().splitlines() if line.lstrip().startswith("#")] == comments
    data = tomllib.loads(merged.read_text())
    assert next(it for it in data["item"] if it["id"] == "wing-l")["mass"] == 100.5
    assert data["change"][-1]["action"] == "import"
