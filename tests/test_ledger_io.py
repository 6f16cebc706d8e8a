"""Reading and writing the v1 ledger file (DESIGN.md contract).

Check values: exact unit definitions (NIST SP 811: 1 lb = 0.45359237 kg,
1 in = 0.0254 m) and tomllib (the standard library's TOML reader) as the
reference parser.
"""

import os
import tomllib
from fractions import Fraction as F

import pytest

from steelyard.core.errors import SteelyardError
from steelyard.io.ledger.file import ChangedOnDisk, has_comments, open_ledger, save_ledger
from steelyard.io.ledger.read import ledger_from_data
from steelyard.io.ledger.write import ledger_to_toml
from steelyard.io.ledger.toml_read import parse_toml

FIXTURES = __import__("pathlib").Path(__file__).resolve().parents[1] / "fixtures"

GOOD = sorted(p for p in FIXTURES.glob("*.toml"))

LEDGER = """steelyard = 1
[units]
mass = "lb"
length = "in"
inertia = "lb*in**2"

[[item]]
id = "radio"
name = "Radio"
group = "avionics/com"
mass = 2.3
cg = [142, 0, "1 ft"]
inertia = { xx = 1.5, yy = 2.0, zz = 2.5, xy = 0.1 }

[[item]]
id = "fuel"
mass = "120 lb"
cg = [95, -10, 20]
variable = true
density = "6 lb/gal"
user = { note = "kept as is", reviewed = 2026-03-01 }

[[loadout]]
name = "some"
set = { fuel = "10 gal" }
"""


def test_values_are_si_with_exact_factors():
    led = ledger_from_data(tomllib.loads(LEDGER), source="t")
    radio = led.item("radio")
    # a bare number times the (correctly rounded) factor: within two roundings of exact
    assert radio.mass == pytest.approx(float(F("2.3") * F("0.45359237")), rel=3e-16)
    assert radio.cg == pytest.approx((float(142 * F("0.0254")), 0.0, float(12 * F("0.0254"))), rel=3e-16)
    assert radio.inertia[3] == pytest.approx(float(F("0.1") * F("0.45359237") * F("0.0254") ** 2), rel=3e-16)
    # the user's own data: kept exactly as TOML read it (tomllib is the reference reader)
    assert led.item("fuel").user == tomllib.loads(LEDGER)["item"][1]["user"]


def test_save_round_trips_and_is_canonical(tmp_path):
    led = ledger_from_data(tomllib.loads(LEDGER), source="t")
    text = ledger_to_toml(led)
    again = ledger_from_data(tomllib.loads(text), source="t2")
    assert again.items == led.items and again.loadouts == led.loadouts
    assert ledger_to_toml(again) == text  # deterministic: same ledger, same bytes
    assert 'mass = "lb"' in text and "mass = 2.3\n" in text  # the file's own units kept
    assert '"1.0 ft"' in text  # a value written with its unit keeps that unit


@pytest.mark.parametrize("path", GOOD, ids=lambda p: p.name)
def test_fixtures_round_trip(path, tmp_path):
    led = open_ledger(path).ledger
    out = tmp_path / path.name
    save_ledger(out, led)
    again = open_ledger(out).ledger
    assert again.items == led.items
    assert again.loadouts == led.loadouts and again.envelopes == led.envelopes


@pytest.mark.parametrize("path", GOOD, ids=lambda p: p.name)
def test_fast_parser_agrees_with_tomllib(path):
    text = path.read_text()
    assert parse_toml(text, source=str(path)) == tomllib.loads(text)


def test_comments_detected_and_kept_by_a_save(tmp_path):
    assert has_comments('a = "x # not a comment"\n') is False
    assert has_comments('a = 1 # yes\n') is True
    p = tmp_path / "l.toml"
    p.write_text("# hand-edited\n" + LEDGER)
    loaded = open_ledger(p)
    before = p.read_bytes()
    record = save_ledger(p, loaded.ledger, loaded=loaded)  # nothing to ask: the comment stays
    assert p.read_bytes() == before and record.had_comments


def test_changed_on_disk_is_not_overwritten(tmp_path):
    p = tmp_path / "l.toml"
    p.write_text(LEDGER)
    loaded = open_ledger(p)
    p.write_text(LEDGER + "\n[[item]]\nid = \"other\"\nmass = 1\ncg = [0, 0, 0]\n")
    before = p.read_bytes()
    with pytest.raises(ChangedOnDisk):
        save_ledger(p, loaded.ledger, loaded=loaded)
    assert p.read_bytes() == before


def test_failed_load_is_never_written_over(tmp_path):
    p = tmp_path / "bad.toml"
    p.write_text(LEDGER.replace("mass = 2.3", "mass = -2.3"))
    before = p.read_bytes()
    with pytest.raises(SteelyardError):
        open_ledger(p)
    good = ledger_from_data(tomllib.loads(LEDGER), source="t")
    with pytest.raises(SteelyardError, match="failed to load"):
        save_ledger(p, good)
    assert p.read_bytes() == before


def test_atomic_save_leaves_no_temp_files_and_keeps_mode(tmp_path):
    p = tmp_path / "l.toml"
    p.write_text(LEDGER)
    os.chmod(p, 0o640)
    loaded = open_ledger(p)
    save_ledger(p, loaded.ledger, loaded=loaded)
    assert sorted(x.name for x in tmp_path.iterdir()) == ["l.toml"]
    assert (p.stat().st_mode & 0o777) == 0o640


def test_frame_must_be_right_handed():
    data = tomllib.loads(LEDGER)
    data["frame"] = {"x": "fwd", "y": "right", "z": "up"}  # left-handed
    with pytest.raises(SteelyardError, match="left-handed"):
        ledger_from_data(data, source="t")
    data["frame"] = {"x": "fwd", "y": "right", "z": "down"}  # right-handed (common practice)
    ledger_from_data(data, source="t")


@pytest.mark.parametrize("data", [b"", b"\n", b" \t\r\n\x0b\x0c \n"])
def test_a_file_of_ascii_whitespace_only_is_an_empty_file(tmp_path, data):
    # bytes.isspace / bytes.strip: ASCII whitespace is space, \t, \n, \r, \x0b, \x0c (Python docs, bytes methods)
    from steelyard.core.errors import FormatError

    path = tmp_path / "blank.toml"
    path.write_bytes(data)
    with pytest.raises(FormatError, match="empty file"):
        open_ledger(path)


@pytest.mark.parametrize("data", [b"\x1c\n", "\u00a0\n".encode()])
def test_other_blank_looking_bytes_are_not_an_empty_file(tmp_path, data):
    # not ASCII whitespace: the file is read, and refused for what it holds
    path = tmp_path / "odd.toml"
    path.write_bytes(data)
    with pytest.raises(SteelyardError) as err:
        open_ledger(path)
    assert "empty file" not in str(err.value)
