"""`steelyard snapshot`: a valid ledger of one configuration, with checked totals and hash.

Outside references: NIST SP 811 exact factors (1 lb = 0.45359237 kg, 1 in =
0.0254 m, 1 US gal = 231 in³ so "6 lb/gal" × "12 gal" = 72 lb exactly);
CG = Σ m·x / Σ m (FAA-H-8083-1) with exact fractions; SHA-256 (FIPS 180-4)
through hashlib over the bytes the documented definition names; tomllib
(the standard TOML reader) for the file's structure.
"""

from __future__ import annotations

import datetime as dt
import getpass
import hashlib
import json
import re
import tomllib
from fractions import Fraction as F
from pathlib import Path

import numpy as np
import pytest

from support.cli import one_line_error, run_main
from support.paths import ROOT, TRAINER
from support.units import IN, LB

DRONE = ROOT / "fixtures" / "cargo-drone.toml"
LOADOUTS = [lo["name"] for lo in tomllib.loads(TRAINER.read_text())["loadout"]]


def take(capsys, tmp_path, source=TRAINER, loadout="takeoff", name="snap.toml") -> Path:
    out = tmp_path / name
    args = ["snapshot", source, "-o", out] + (["--loadout", loadout] if loadout else [])
    rc, _, err = run_main(capsys, *args)
    assert rc == 0, err
    return out


def rollup_json(capsys, *args) -> dict:
    rc, out, err = run_main(capsys, "rollup", *args, "--json")
    assert rc == 0, err
    return json.loads(out)


def assert_same_rollup(x: dict, y: dict):
    assert x["mass_kg"] == pytest.approx(y["mass_kg"], rel=1e-13)
    assert x["cg_m"] == pytest.approx(y["cg_m"], rel=1e-12, abs=1e-14)
    scale = max(abs(v) for row in y["inertia_cg_kg_m2"] for v in row)
    for r1, r2 in zip(x["inertia_cg_kg_m2"], y["inertia_cg_kg_m2"]):
        assert r1 == pytest.approx(r2, rel=0, abs=1e-11 * scale)
    assert x["principal_kg_m2"] == pytest.approx(y["principal_kg_m2"], rel=1e-11)
    assert [(e["name"], e["inside"]) for e in x["envelopes"]] == [(e["name"], e["inside"]) for e in y["envelopes"]]
    for e1, e2 in zip(x["envelopes"], y["envelopes"]):
        if e2["margin_m"] is None:
            assert e1["margin_m"] is None
        else:
            assert e1["margin_m"] == pytest.approx(e2["margin_m"], abs=1e-12)


@pytest.mark.parametrize("loadout", [None] + LOADOUTS)
def test_snapshot_rollup_equals_the_loadout_rollup(capsys, tmp_path, loadout):
    snap = take(capsys, tmp_path, loadout=loadout)
    original = rollup_json(capsys, TRAINER, *(["--loadout", loadout] if loadout else []))
    assert_same_rollup(rollup_json(capsys, snap), original)


def test_snapshot_of_a_kg_metre_file(capsys, tmp_path):
    names = [lo["name"] for lo in tomllib.loads(DRONE.read_text()).get("loadout", [])]
    for name in names[:2]:
        snap = take(capsys, tmp_path, DRONE, name, f"{name}.toml")
        assert_same_rollup(rollup_json(capsys, snap), rollup_json(capsys, DRONE, "--loadout", name))


def test_snapshot_is_a_self_contained_ledger(capsys, tmp_path):
    snap = take(capsys, tmp_path, loadout="takeoff")
    text = snap.read_text()
    data = tomllib.loads(text)
    source = tomllib.loads(TRAINER.read_text())
    assert data["steelyard"] == 1
    assert "loadout" not in data  # one configuration: nothing left to load
    assert [it["id"] for it in data["item"]] == [it["id"] for it in source["item"]]
    assert not any(it.get("variable") for it in data["item"])
    assert [e["name"] for e in data["envelope"]] == [e["name"] for e in source["envelope"]]
    items = {it["id"]: it for it in data["item"]}
    assert data["units"]["mass"] == "kg"
    # amounts applied (NIST SP 811): pilot "77 kg"; passenger "132 lb"; fuel "12 gal" × 6 lb/gal = 72 lb;
    # baggage "68 lb"; tail ballast not named: empty
    assert items["pilot"]["mass"] == pytest.approx(77.0, rel=1e-15)
    assert items["passenger"]["mass"] == pytest.approx(float(132 * LB), rel=1e-15)
    assert items["fuel-l"]["mass"] == pytest.approx(float(72 * LB), rel=1e-14)
    assert items["baggage"]["mass"] == pytest.approx(float(68 * LB), rel=1e-15)
    assert items["tail-ballast"]["mass"] == 0.0
    assert items["fuel-l"]["loaded"]["capacity_kg"] == pytest.approx(float(120 * LB), rel=1e-15)
    assert items["fuel-l"]["loaded"]["fill"] == pytest.approx(72 / 120, rel=1e-14)
    assert items["battery"]["mass"] == pytest.approx(float(24 * LB), rel=1e-15)
    assert items["battery"]["cg"] == pytest.approx([float(99 * IN), float(8 * IN), float(30 * IN)], rel=1e-15)


def test_snapshot_table_records_who_when_what(capsys, tmp_path):
    before = dt.datetime.now(dt.timezone.utc).replace(microsecond=0)
    snap = take(capsys, tmp_path, loadout="solo-training")
    after = dt.datetime.now(dt.timezone.utc)
    t = tomllib.loads(snap.read_text())["snapshot"]
    assert t["author"] == getpass.getuser()
    assert t["loadout"] == "solo-training"
    assert t["source"] == str(TRAINER)
    assert t["source_sha256"] == hashlib.sha256(TRAINER.read_bytes()).hexdigest()
    assert before <= t["taken"] <= after
    assert "Planning aid only" in t["caution"]
    # totals, against an exact roll-up of the fixture text (fractions; FAA-H-8083-1):
    # solo-training = pilot "82 kg", each wing tank 0.5 of 120 lb, every fixed item
    src = tomllib.loads(TRAINER.read_text())
    sets = next(lo for lo in src["loadout"] if lo["name"] == "solo-training")["set"]
    total, moment = F(0), F(0)
    for it in src["item"]:
        m = F(str(it["mass"]).split()[0]) * (F(1) if str(it["mass"]).endswith("kg") else LB) * it.get("quantity", 1)
        if it.get("variable"):
            amount = sets.get(it["id"], 0)
            m = F(amount.split()[0]) if isinstance(amount, str) else m * F(str(amount))
        total += m
        moment += m * F(str(it["cg"][0])) * IN
    assert t["totals"]["mass_kg"] == pytest.approx(float(total), rel=1e-14)
    assert t["totals"]["cg_m"][0] == pytest.approx(float(moment / total), rel=1e-13)
    assert {e["name"] for e in t["envelopes"]} == {"normal", "utility"}


def test_content_hash_is_the_text_before_the_snapshot_table(capsys, tmp_path):
    # docs/diff.md: content_sha256 = SHA-256 of the canonical text without [snapshot]; as written,
    # that is exactly the file's bytes before the blank line ahead of "[snapshot]".
    snap = take(capsys, tmp_path)
    data = snap.read_bytes()
    cut = data.index(b"\n\n[snapshot]\n")
    stored = tomllib.loads(data.decode())["snapshot"]["content_sha256"]
    assert hashlib.sha256(data[: cut + 1]).hexdigest() == stored


def test_verify_passes_on_a_fresh_snapshot_and_after_a_comment(capsys, tmp_path):
    snap = take(capsys, tmp_path)
    rc, out, err = run_main(capsys, "snapshot", "--verify", snap)
    assert rc == 0 and "verified" in out and len(out.strip().splitlines()) == 1, err
    snap.write_text("# reviewed by the weights group\n" + snap.read_text())
    rc, out, err = run_main(capsys, "snapshot", "--verify", snap)
    assert rc == 0, err  # comments are not content


def edit(path: Path, pattern: str, repl: str) -> None:
    text = path.read_text()
    new, n = re.subn(pattern, repl, text, count=1, flags=re.M)
    assert n == 1, pattern
    path.write_text(new)


def test_hand_edited_item_is_caught(capsys, tmp_path):
    snap = take(capsys, tmp_path)
    edit(snap, r'^(id = "battery"\n(?:.*\n)*?mass = )(\S+)$', r"\g<1>11.5")
    rc, _, err = run_main(capsys, "snapshot", "--verify", snap)
    one_line_error(rc, err, str(snap), "snapshot", "content_sha256", "edited")
    rc, out, err = run_main(capsys, "rollup", snap, "--json")  # still a readable ledger
    assert rc == 0, err
    rc, _, err = run_main(capsys, "diff", f"{TRAINER}:takeoff", snap)
    one_line_error(rc, err, str(snap), "content_sha256", "--allow-mismatch")
    rc, out, err = run_main(capsys, "diff", f"{TRAINER}:takeoff", snap, "--allow-mismatch", "--json")
    assert rc == 1 and "warning" in err
    (ch,) = json.loads(out)["changed"]
    assert ch["id"] == "battery" and ch["fields"]["mass_kg"][1] == 11.5


def test_hand_edited_totals_and_status_are_caught(capsys, tmp_path):
    snap = take(capsys, tmp_path)
    original = snap.read_text()
    edit(snap, r"^(mass_kg = )(\S+)$", r"\g<1>700.0")
    rc, _, err = run_main(capsys, "snapshot", "--verify", snap)
    one_line_error(rc, err, str(snap), "snapshot", "totals.mass_kg", "700")
    snap.write_text(original)
    edit(snap, r'^(name = "normal"\naxis = "x"\ninside = )true$', r"\g<1>false")
    rc, _, err = run_main(capsys, "snapshot", "--verify", snap)
    one_line_error(rc, err, "envelopes.normal")
    snap.write_text(original)
    edit(snap, r'^content_sha256 = "(\w)', r'content_sha256 = "0\1')
    rc, _, err = run_main(capsys, "snapshot", "--verify", snap)
    one_line_error(rc, err, "content_sha256")


def test_diff_against_a_baseline_snapshot(capsys, tmp_path):
    snap = take(capsys, tmp_path, loadout="takeoff")
    rc, out, err = run_main(capsys, "diff", f"{TRAINER}:takeoff", snap)
    assert rc == 0 and "no differences" in out and len(out.strip().splitlines()) == 1, err
    # the working ledger gains a 2.3 lb radio at FS 142 in
    work = tmp_path / "work.toml"
    work.write_text(TRAINER.read_text().replace(
        "[[item]]\nid = \"elt\"",
        '[[item]]\nid = "radio-2"\nname = "Second radio"\nmass = 2.3\ncg = [142.0, 0.0, 24.0]\n\n[[item]]\nid = "elt"'))
    rc, out, err = run_main(capsys, "diff", snap, f"{work}:takeoff", "--json")
    assert rc == 1, err
    rec = json.loads(out)
    assert rec["added"] == ["radio-2"] and rec["removed"] == [] and rec["changed"] == []
    assert rec["a_source"]["snapshot"] is True and rec["a"]["loadout"] == "takeoff"
    # weight added / new total = ΔCG / (station − old CG)   (FAA-H-8083-1)
    w, station = 23 * LB / 10, 142 * IN
    old_m, old_x = F(rec["a"]["mass_kg"]), F(rec["a"]["cg_m"][0])
    want = w * (station - old_x) / (old_m + w)
    assert rec["delta"]["cg_m"][0] == pytest.approx(float(want), rel=1e-9)
    assert rec["ranked"][0]["id"] == "radio-2"
    assert rec["ranked"][0]["cg_shift_m"][0] == pytest.approx(float(want), rel=1e-9)


def test_snapshot_of_a_snapshot_keeps_the_marker_and_verifies(capsys, tmp_path):
    first = take(capsys, tmp_path, loadout="trip")
    second = take(capsys, tmp_path, first, None, "second.toml")
    rc, _, err = run_main(capsys, "snapshot", "--verify", second)
    assert rc == 0, err
    items = {it["id"]: it for it in tomllib.loads(second.read_text())["item"]}
    assert items["fuel-l"]["loaded"]["fill"] == pytest.approx(96 / 120, rel=1e-14)  # 16 gal × 6 lb/gal of 120 lb
    rc, out, err = run_main(capsys, "diff", first, second)
    assert rc == 0, out + err


def test_snapshot_errors_exit_2_one_line(capsys, tmp_path):
    rc, _, err = run_main(capsys, "snapshot", TRAINER, "--loadout", "nope")
    one_line_error(rc, err, "--loadout", "nope")
    rc, _, err = run_main(capsys, "snapshot", TRAINER, "-o", TRAINER)
    one_line_error(rc, err, "--output", "source")
    out = tmp_path / "exists.toml"
    out.write_text("keep me")
    rc, _, err = run_main(capsys, "snapshot", TRAINER, "-o", out)
    one_line_error(rc, err, "--force")
    assert out.read_text() == "keep me"
    rc, _, err = run_main(capsys, "snapshot", TRAINER, "-o", out, "--force")
    assert rc == 0, err
    rc, _, err = run_main(capsys, "snapshot", "--verify", TRAINER)
    one_line_error(rc, err, "not a snapshot")
    rc, _, err = run_main(capsys, "diff", f"{out}:takeoff", TRAINER)
    one_line_error(rc, err, "loadout")


def test_snapshot_to_stdout_reads_back(capsys, tmp_path):
    rc, out, err = run_main(capsys, "snapshot", TRAINER, "--loadout", "trip")
    assert rc == 0, err
    p = tmp_path / "piped.toml"
    p.write_text(out)
    rc, _, err = run_main(capsys, "snapshot", "--verify", p)
    assert rc == 0, err


def test_snapshots_of_awkward_numbers_verify(capsys, tmp_path):
    # The hash is re-derived from the snapshot as read, so the canonical writer must give back its own
    # text for any value: random doubles (17 significant digits) in lb and in, which become SI values
    # with no short decimal form, on fixed and variable items, tables and shapes. (Exact arithmetic:
    # the loadout amount is a fraction, so the carried mass is fill × full.)
    rng = np.random.default_rng(11)
    lines = ['steelyard = 1\n[units]\nmass = "lb"\nlength = "in"\ninertia = "lb*in**2"\n']
    for k in range(300):
        m = float(rng.lognormal(0, 2))
        x, y, z = rng.uniform(-300, 300, 3).tolist()
        lines.append(f'[[item]]\nid = "p{k}"\nmass = {m!r}\ncg = [{x!r}, {y!r}, {z!r}]\n')
        if k % 3 == 0:
            d = (rng.uniform(1, 1.9, 3) * 10 ** rng.uniform(-3, 3)).tolist()  # realisable: each < sum of others
            p = (rng.uniform(-0.1, 0.1, 3) * min(d)).tolist()
            lines.append(f"inertia = {{ xx = {d[0]!r}, yy = {d[1]!r}, zz = {d[2]!r}, "
                         f"xy = {p[0]!r}, xz = {p[1]!r}, yz = {p[2]!r} }}\n")
        elif k % 3 == 1:
            lines.append(f'shape = {{ kind = "box", size = [{float(rng.uniform(0.1, 9))!r}, 1.0, 2.0] }}\n')
        if k % 10 == 0:
            lines.append("variable = true\n")
    fills = {f"p{k}": float(rng.uniform()) for k in range(0, 300, 10)}
    lines.append('[[loadout]]\nname = "odd"\n[loadout.set]\n' + "".join(f"{k} = {v!r}\n" for k, v in fills.items()))
    src = tmp_path / "awkward.toml"
    src.write_text("\n".join(lines))
    snap = take(capsys, tmp_path, src, "odd", "awkward-snap.toml")
    rc, _, err = run_main(capsys, "snapshot", "--verify", snap)
    assert rc == 0, err
    rc, out, err = run_main(capsys, "diff", f"{src}:odd", snap)
    assert rc == 0, out + err
    items = {it["id"]: it for it in tomllib.loads(snap.read_text())["item"]}
    raw = {it["id"]: it for it in tomllib.loads(src.read_text())["item"]}
    for k, f in fills.items():  # carried mass = fill × full, in kg (NIST SP 811: 1 lb = 0.45359237 kg)
        assert items[k]["mass"] == pytest.approx(float(F(f) * F(raw[k]["mass"]) * LB), rel=1e-14)
