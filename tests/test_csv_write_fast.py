"""CSV export built a column at a time: what the stdlib csv module reads back is each text as the
protection rule gives it and each number exactly.

References: Python's csv module (an RFC 4180 reader) parses the export; the
formula-protection rule is the OWASP CSV-injection list (= + - @ TAB CR
first, after any apostrophes) restated here; numbers are checked by float()
of the cell times the unit factor against the SI value (exact arithmetic).
"""

from __future__ import annotations

import csv
import io
import json
import re
import tomllib

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from steelyard.io.exchange.csv_io import ledger_to_csv
from steelyard.io.ledger.read import ledger_from_data

_GUARD = re.compile(r"'*[=+\-@\t\r]")  # restated from the OWASP list, not imported


def _expected(text: str) -> str:
    return "'" + text if _GUARD.match(text) else text


_TEXT = st.text(st.characters(blacklist_categories=("Cs",), blacklist_characters="\x00"), max_size=8)
_SAMPLES = st.sampled_from(["", "plain", "=SUM(A1)", "'=x", "'quoted'", " lead", "trail ", "a,b", 'say "hi"',
                            "two\nlines", "\tTab", "+1", "-", "@home", "\u00a0nbsp", "x\u2003", "semi;colon"])


def _toml_string(s: str) -> str:
    """A TOML basic string: JSON's escapes are TOML's, plus DEL, which TOML also wants escaped."""
    return json.dumps(s, ensure_ascii=False).replace("\x7f", "\\u007f")


def _ledger(names, groups, masses):
    lines = ["steelyard = 1", "[units]", 'mass = "kg"', 'length = "m"']
    for k, (name, group, m) in enumerate(zip(names, groups, masses)):
        lines += ["[[item]]", f'id = "p{k}"', f"name = {_toml_string(name)}",
                  f"group = {_toml_string(group)}", f"mass = {m!r}",
                  f"cg = [{m / 3!r}, {-m!r}, 0.1]"]
    return ledger_from_data(tomllib.loads("\n".join(lines) + "\n"), source="t.toml")


@settings(max_examples=60, deadline=None, suppress_health_check=list(HealthCheck))
@given(st.lists(st.tuples(st.one_of(_SAMPLES, _TEXT), st.one_of(_SAMPLES, _TEXT),
                          st.floats(0, 1e6, allow_nan=False)), min_size=1, max_size=12),
       st.booleans())
def test_stdlib_csv_reads_back_every_cell(rows, decimal_comma):
    names, groups, masses = zip(*rows)
    ledger = _ledger(names, groups, masses)
    text = ledger_to_csv(ledger, system="si", decimal_comma=decimal_comma)
    read = list(csv.reader(io.StringIO(text, newline=""), delimiter=";" if decimal_comma else ","))
    header, body = read[0], read[1:]
    assert len(body) == len(rows)
    col = {h.split(" [")[0]: j for j, h in enumerate(header)}
    for k, (cells, name, group, m) in enumerate(zip(body, names, groups, masses)):
        assert cells[col["id"]] == f"p{k}"
        assert cells[col["name"]] == _expected(name)
        assert cells[col["group"]] == _expected(group)
        num = (lambda c: float(c.replace(",", "."))) if decimal_comma else float
        assert num(cells[col["mass"]]) == m
        assert num(cells[col["x"]]) == m / 3
        assert cells[col["quantity"]] == "1" and cells[col["variable"]] == "false"
    assert text.endswith("\n") and not text.endswith("\n\n") or text.endswith('"\n')
