"""Hostile input: huge names, deep groups, tricky unicode, terminal escapes and markup.

Each ledger is loaded from disk, rolled up, saved and reloaded; the reloaded
items must equal the loaded ones, character for character (no unicode
normalisation, no stripping). Check values are plain sums with exact
Fractions; TOML text is read back with tomllib as the reference parser.
"""

from __future__ import annotations

import json
import tomllib
import unicodedata
from fractions import Fraction as F

import numpy as np
import pytest

from steelyard.cli.main import main
from steelyard.core.errors import SteelyardError
from steelyard.core.physics.groups import subtotals
from steelyard.core.loading.loadout import resolve
from steelyard.core.physics.rollup import rollup_state
from steelyard.io.ledger.file import open_ledger, save_ledger
from steelyard.io.ledger.toml_write import string

HUGE_NAME = ("Kabelbaum " + "配線束" * 3 + "e\u0301" + "\U0001F6E9\ufe0f" + "\u200d") * 150_000  # ~4 MB of UTF-8
DEEP_GROUP = "/".join(f"level-{k}" for k in range(64))  # the deepest path a ledger accepts
TRICKY = ["e\u0301", "\u00e9",  # the same letter, decomposed and precomposed: two different ids
          "表示幅テスト", "Z\u0351\u0364\u0310a\u036b\u0350l\u0314g\u0367o\u0361",  # wide CJK, stacked marks
          "\u202eright-to-left", "\ufeffbom", "zero\u200bwidth", "tab\tand\rreturn", "nul\u0000inside"]
ESCAPES = ["\x1b[2J\x1b[H", "\x1b]0;title\x07", "\x1b[31mred\x1b[0m", "[b]bold[/b]", "[/]", "[link=x]y[/link]",
           "\\[not markup]", "${HOME}", "'; rm -rf /"]


class Raw(str):
    """TOML text written as is (arrays, numbers in odd spellings)."""


def _value(v) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    return v if isinstance(v, Raw) or not isinstance(v, str) else string(v)


def _ledger_text(items: list[dict], extra: str = "") -> str:
    lines = ["steelyard = 1"]
    for it in items:
        lines += ["[[item]]"] + [f"{k} = {_value(v)}"
                                 for k, v in it.items()]
    return "\n".join(lines) + "\n" + extra


def _round_trip(tmp_path, text: str):
    """Load from disk, roll up under every loadout, save, reload; return (loaded, reloaded)."""
    src = tmp_path / "hostile.toml"
    src.write_text(text, encoding="utf-8")
    loaded = open_ledger(src)
    for name in [None] + [lo.name for lo in loaded.ledger.loadouts]:
        rollup_state(resolve(loaded.ledger, name))
    out = tmp_path / "saved.toml"
    save_ledger(out, loaded.ledger)
    again = open_ledger(out)
    assert again.ledger.items == loaded.ledger.items
    assert [lo.name for lo in again.ledger.loadouts] == [lo.name for lo in loaded.ledger.loadouts]
    assert tomllib.loads(out.read_text(encoding="utf-8"))["item"][0]["id"] == loaded.ledger.items[0].id
    return loaded.ledger, again.ledger


def test_multi_megabyte_name(tmp_path):
    assert len(HUGE_NAME.encode("utf-8")) > 4_000_000
    led, again = _round_trip(tmp_path, _ledger_text([
        {"id": "harness", "name": HUGE_NAME, "mass": 12.5, "cg": Raw("[3.0, 0.0, 1.0]")},
        {"id": "box", "name": "x" * 100, "mass": 2.5, "cg": Raw("[1.0, 0.0, 0.0]")}]))
    assert again.items[0].name == HUGE_NAME
    mp = rollup_state(resolve(again))
    assert mp.mass == pytest.approx(15.0, rel=1e-15)  # 12.5 + 2.5
    assert mp.cg[0] == pytest.approx(float((F("12.5") * 3 + F("2.5") * 1) / 15), rel=1e-15)  # Σ m·x / Σ m


def test_deepest_accepted_group(tmp_path):
    led, again = _round_trip(tmp_path, _ledger_text([
        {"id": "deep", "group": DEEP_GROUP, "mass": 3.0, "cg": Raw("[1.0, 2.0, 3.0]")},
        {"id": "half", "group": "/".join(DEEP_GROUP.split("/")[:32]), "mass": 1.0, "cg": Raw("[5.0, 2.0, 3.0]")},
        {"id": "other", "group": "other", "mass": 4.0, "cg": Raw("[0.0, 0.0, 0.0]")}]))
    assert again.items[0].group == DEEP_GROUP
    state = resolve(again)
    totals = {g.path: g for g in subtotals([it.group for it in again.items], state.mass, state.cg, state.own)}
    assert len(totals) == 64 + 1
    parts = DEEP_GROUP.split("/")
    for depth in (1, 32, 33, 64):
        g = totals["/".join(parts[:depth])]
        # prefixes down to level 32 hold both items (3 + 1 kg, CG x = (3·1 + 1·5)/4 = 2); deeper ones only "deep"
        assert (g.depth, g.count, g.mass) == ((depth - 1, 2, 4.0) if depth <= 32 else (depth - 1, 1, 3.0))
        assert g.cg[0] == pytest.approx(2.0 if depth <= 32 else 1.0, rel=1e-15)


def test_too_deep_group_is_refused_naming_item_and_field(tmp_path):
    # a 20,000-level path once made rollup run for minutes and report grow with the square of the depth
    text = _ledger_text([{"id": "deep", "group": "/".join(f"g{k}" for k in range(20_000)), "mass": 1.0,
                          "cg": Raw("[0.0, 0.0, 0.0]")}])
    path = tmp_path / "deep.toml"
    path.write_text(text)
    with pytest.raises(SteelyardError) as e:
        open_ledger(path)
    assert "item 'deep'" in str(e.value) and "group" in str(e.value) and "64" in str(e.value)


def test_tricky_unicode_names_are_kept_exactly(tmp_path):
    items = [{"id": t, "name": t * 3, "group": f"{t}/{t}", "mass": k + 1, "cg": Raw(f"[{k}, 0, 0]")}
             for k, t in enumerate(TRICKY)]
    led, again = _round_trip(tmp_path, _ledger_text(items))
    assert [it.id for it in again.items] == TRICKY  # nothing normalised (NFC would merge the first two)
    assert unicodedata.normalize("NFC", TRICKY[0]) == TRICKY[1] and again.items[0].id != again.items[1].id
    assert again.items[3].name == TRICKY[3] * 3


def test_escapes_and_markup_are_data(tmp_path):
    items = [{"id": f"i{k}{t}", "name": t, "group": f"{t}/sub", "mass": 1.0, "cg": Raw("[0, 0, 0]"),
              "variable": True} for k, t in enumerate(ESCAPES)]
    loadout = "[[loadout]]\nname = " + string(ESCAPES[0]) + "\n[loadout.set]\n" + string(items[1]["id"]) + " = 0.5\n"
    led, again = _round_trip(tmp_path, _ledger_text(items, loadout))
    assert [it.name for it in again.items] == ESCAPES
    assert again.loadouts[0].name == ESCAPES[0]
    assert rollup_state(resolve(again, ESCAPES[0])).mass == pytest.approx(0.5)  # half of one 1 kg item


def test_cli_rollup_prints_no_raw_terminal_escapes(tmp_path, capsys):
    items = [{"id": "a", "name": ESCAPES[0], "group": ESCAPES[2] + "/x", "mass": 1.0, "cg": Raw("[0, 0, 0]")},
             {"id": "b", "name": TRICKY[3], "group": TRICKY[2], "mass": 1.0, "cg": Raw("[1, 0, 0]")}]
    path = tmp_path / "esc.toml"
    path.write_text(_ledger_text(items), encoding="utf-8")
    assert main(["rollup", str(path)]) == 0
    out = capsys.readouterr().out
    assert "red" in out  # the group is listed...
    assert "\x1b" not in out and "\x07" not in out  # ...but its escape sequence is not sent to the terminal
    assert main(["rollup", str(path), "--json"]) == 0
    assert json.loads(capsys.readouterr().out)["mass_kg"] == 2.0


def test_error_about_a_huge_id_stays_short(tmp_path):
    big = "x" * 3_000_000
    path = tmp_path / "dup.toml"
    path.write_text(_ledger_text([{"id": big, "mass": 1, "cg": Raw("[0, 0, 0]")},
                                  {"id": big, "mass": 1, "cg": Raw("[0, 0, 0]")}]), encoding="utf-8")
    with pytest.raises(SteelyardError) as err:
        open_ledger(path)
    message = str(err.value)
    assert "duplicate" in message and len(message.splitlines()) == 1
    assert len(message) < 2000, len(message)  # a message names the item; it need not print 3 MB of it


def test_hostile_values_as_numbers(tmp_path):
    """Names that look like numbers or units stay names; numbers in odd TOML spellings read right."""
    text = _ledger_text([{"id": "1e3", "name": "41.5 lb", "group": "nan/inf", "mass": Raw("1_000.5"),
                          "cg": Raw("[+1.5e0, -0.0, 0x10]")}])
    led, again = _round_trip(tmp_path, text)
    it = again.items[0]
    assert (it.id, it.name, it.group) == ("1e3", "41.5 lb", "nan/inf")
    assert it.mass == 1000.5 and it.cg == (1.5, 0.0, 16.0)  # TOML 1.0: underscores, signs, hex integers
    assert np.signbit(it.cg[1])
