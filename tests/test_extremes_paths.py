"""Every path that rolls up refuses a roll-up beyond a float with one located line.

1e300 kg at 1e10 m has a first moment of 1e310 kg·m, beyond the largest IEEE 754
double (about 1.8e308): no finite answer exists, so the only honest output is
an error naming the file, the item and the field (exit 2), never "inf" or a
traceback. A finite number written in tonnes that overflows once in kilograms
(1e308 t = 1e311 kg) is "too large", not "not finite".
"""

from __future__ import annotations

import sys

import pytest

from steelyard.core.errors import FormatError, SteelyardError
from steelyard.io.ledger.read import ledger_from_data
from steelyard.tui.state.totals import compute_totals
from support.cli import run_cli
from support.ledgers import ledger_from_text

HUGE = 'steelyard = 1\n[[item]]\nid = "h"\nmass = 1e300\ncg = [1e10, 0.0, 0.0]\n'
DBL_MAX = sys.float_info.max  # IEEE 754 binary64: about 1.7976931348623157e308


def test_the_case_really_overflows():
    assert 1e300 * 1e10 > DBL_MAX  # so no finite roll-up exists for HUGE


@pytest.mark.parametrize("args", [
    ["rollup", "{f}"], ["rollup", "{f}", "--json"], ["diff", "{f}", "{f}"],
    ["solve", "add", "{f}", "--mass", "1", "--station", "1"], ["check", "{f}"], ["export", "{f}", "--json", "-"],
])
def test_every_command_refuses_with_one_located_line(tmp_path, args):
    f = tmp_path / "huge.toml"
    f.write_text(HUGE)
    rc, out, err = run_cli(*[a.format(f=f) for a in args])
    assert rc == 2, (rc, out, err)
    lines = err.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in err and "Warning" not in err, err
    assert str(f) in lines[0] and "item 'h'" in lines[0], lines[0]


def test_the_editor_totals_show_the_reason_instead_of_crashing():
    totals = compute_totals(ledger_from_text(HUGE), None)
    assert totals.mp is None and totals.error is not None and "item 'h'" in totals.error


def test_finite_as_written_but_overflowing_in_si_is_too_large():
    text = 'steelyard = 1\n[units]\nmass = "t"\n[[item]]\nid = "h"\nmass = 1e308\ncg = [0, 0, 0]\n'
    with pytest.raises(SteelyardError) as e:
        ledger_from_text(text, "t.toml")
    assert "too large" in str(e.value) and "item 'h'" in str(e.value) and "mass" in str(e.value)


def test_format_version_message_names_the_program_once():
    with pytest.raises(FormatError) as e:
        ledger_from_data({"steelyard": 99}, source="v.toml")
    assert str(e.value).startswith("v.toml: format version 99 is newer")
