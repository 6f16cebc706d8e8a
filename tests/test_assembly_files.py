"""Trees of ledger files: bad trees refused with one line, writers that keep the tree, snapshots, diffs,
merges and revisions of a tree. Expected numbers are exact arithmetic on the files' own values."""

from __future__ import annotations

import hashlib
import json
import shutil
from fractions import Fraction
from pathlib import Path

import pytest

from support.cli import one_line_error, run_main
from support.git_repo import commit, init_repo
from support.paths import FIXTURES

from steelyard.io.ledger.file import open_ledger, save_ledger
from steelyard.io.ledger.write import ledger_to_toml

POD = """steelyard = 1
[[item]]
id = "motor"
mass = 2.0
cg = [0.1, 0.0, 0.05]
[[item]]
id = "arm"
mass = 1.0
cg = [-0.4, 0.0, 0.0]
"""


def parent(assemblies: str, items: str = "") -> str:
    return f"steelyard = 1\n{items}\n{assemblies}\n"


def tree(tmp_path: Path, top: str, files: dict[str, str]) -> Path:
    for name, text in files.items():
        p = tmp_path / name
        p.parent.mkdir(parents=True, exist_ok=True)
        p.write_text(text)
    path = tmp_path / "vehicle.toml"
    path.write_text(top)
    return path


ONE_POD = '[[assembly]]\nid = "pod"\nfile = "pods/pod.toml"\nat = [1.0, 0.5, 0.0]\n'


# ------------------------------------------------------------------ bad trees: exit 2, one line, nothing written


def test_missing_file_names_the_parent_the_assembly_and_the_field(tmp_path, capsys):
    top = tree(tmp_path, parent(ONE_POD), {})
    code, out, err = run_main(capsys, "rollup", top)
    line = one_line_error(code, err, "vehicle.toml", "assembly 'pod'", "file", "pods/pod.toml")
    assert "no such file" in line


def test_cycle_names_the_chain_of_files(tmp_path, capsys):
    a = 'steelyard = 1\n[[assembly]]\nid = "b"\nfile = "b.toml"\nat = [0, 0, 0]\n'
    b = 'steelyard = 1\n[[assembly]]\nid = "a"\nfile = "vehicle.toml"\nat = [0, 0, 0]\n'
    top = tree(tmp_path, a, {"b.toml": b})
    code, out, err = run_main(capsys, "check", top)
    line = one_line_error(code, err, "cycle")
    assert "vehicle.toml -> b.toml -> vehicle.toml" in line


def test_a_file_placing_itself_is_a_cycle(tmp_path, capsys):
    top = tree(tmp_path, 'steelyard = 1\n[[assembly]]\nid = "me"\nfile = "vehicle.toml"\nat = [0, 0, 0]\n', {})
    code, _, err = run_main(capsys, "rollup", top, "--json")
    one_line_error(code, err, "cycle", "assembly 'me'")


def test_id_clash_between_an_item_and_a_placed_item(tmp_path, capsys):
    top = tree(tmp_path, parent(ONE_POD, items='[[item]]\nid = "pod/motor"\nmass = 1.0\ncg = [0, 0, 0]\n'),
               {"pods/pod.toml": POD})
    code, _, err = run_main(capsys, "rollup", top)
    one_line_error(code, err, "vehicle.toml", "assembly 'pod'", "pod/motor", "clashes")


def test_assembly_id_equal_to_an_item_id(tmp_path, capsys):
    top = tree(tmp_path, parent(ONE_POD, items='[[item]]\nid = "pod"\nmass = 1.0\ncg = [0, 0, 0]\n'),
               {"pods/pod.toml": POD})
    code, _, err = run_main(capsys, "rollup", top)
    one_line_error(code, err, "vehicle.toml", "assembly 'pod'", "id")


def test_slash_in_an_assembly_id(tmp_path, capsys):
    top = tree(tmp_path, parent(ONE_POD.replace('"pod"', '"pods/left"')), {"pods/pod.toml": POD})
    code, _, err = run_main(capsys, "rollup", top)
    one_line_error(code, err, "vehicle.toml", "assembly 'pods/left'", "id", "'/'")


def test_frame_labels_that_do_not_make_three_axes(tmp_path, capsys):
    bad = POD.replace("steelyard = 1", 'steelyard = 1\n[frame]\nx = "fwd"\ny = "aft"\nz = "up"')
    top = tree(tmp_path, parent(ONE_POD), {"pods/pod.toml": bad})
    code, _, err = run_main(capsys, "rollup", top)
    one_line_error(code, err, "pods/pod.toml", "frame", "same line")


def test_bad_value_inside_an_assembly_names_its_file_item_and_field(tmp_path, capsys):
    top = tree(tmp_path, parent(ONE_POD), {"pods/pod.toml": POD.replace("mass = 1.0", "mass = -1.0")})
    code, _, err = run_main(capsys, "rollup", top)
    one_line_error(code, err, "pods/pod.toml", "item 'arm'", "mass")


def test_unknown_key_in_an_assembly_table_has_a_hint(tmp_path, capsys):
    top = tree(tmp_path, parent(ONE_POD.replace("at = ", "att = ")), {"pods/pod.toml": POD})
    code, _, err = run_main(capsys, "rollup", top)
    one_line_error(code, err, "vehicle.toml", "att", "did you mean")


@pytest.mark.parametrize("line, field", [('mirror = "w"', "mirror"), ('rotate = [["q", 10.0]]', "rotate"),
                                          ("at = [1.0, 2.0]", "at"), ('at = ["1 kg", 0, 0]', "at")])
def test_bad_placement_values(tmp_path, capsys, line, field):
    text = ONE_POD.replace("at = [1.0, 0.5, 0.0]", line) if line.startswith("at") else ONE_POD + line + "\n"
    top = tree(tmp_path, parent(text), {"pods/pod.toml": POD})
    code, _, err = run_main(capsys, "rollup", top)
    one_line_error(code, err, "vehicle.toml", "assembly 'pod'", field)


def test_a_bad_tree_writes_nothing(tmp_path, capsys):
    top = tree(tmp_path, parent(ONE_POD), {"pods/pod.toml": POD.replace("mass = 1.0", 'mass = "1 m"')})
    before = top.read_bytes()
    out = tmp_path / "snap.toml"
    code, _, err = run_main(capsys, "snapshot", top, "-o", out)
    one_line_error(code, err, "pods/pod.toml", "item 'arm'", "mass")
    assert not out.exists() and top.read_bytes() == before
    with pytest.raises(Exception):
        save_ledger(top, open_ledger(top).ledger)  # never reached: the read fails first
    assert top.read_bytes() == before


# ------------------------------------------------------------------ writers keep the tree


def test_write_keeps_assembly_tables_and_never_writes_placed_items(tmp_path):
    src = FIXTURES / "quad-freighter"
    work = tmp_path / "qf"
    shutil.copytree(src, work)
    top = work / "quad-freighter.toml"
    loaded = open_ledger(top)
    text = ledger_to_toml(loaded.ledger)
    assert "pod-fr/motor" not in text.replace('"pod-fr/trim-cup"', "")  # loadout key only
    assert text.count("[[assembly]]") == 5 and text.count("[[item]]") == 4
    (work / "canonical.toml").write_text(text)
    again = open_ledger(work / "canonical.toml").ledger  # read -> write -> read: the same tree
    assert again.assemblies == loaded.ledger.assemblies
    assert [it.id for it in again.items] == [it.id for it in loaded.ledger.items]
    assert [it.cg for it in again.items] == [it.cg for it in loaded.ledger.items]


def test_layout_save_of_a_parent_edit_keeps_comments_and_placements(tmp_path):
    work = tmp_path / "qf"
    shutil.copytree(FIXTURES / "quad-freighter", work)
    top = work / "quad-freighter.toml"
    loaded = open_ledger(top)
    before = top.read_text()
    edited = loaded.ledger.with_item(loaded.ledger.item("gear").evolve(mass=1.25))
    save_ledger(top, edited, loaded=loaded)
    after = top.read_text()
    assert after == before.replace("mass = 1.1\n", "mass = 1.25\n", 1)
    assert open_ledger(top).ledger.item("gear").mass == 1.25


# ------------------------------------------------------------------ a file placed many times is read once


def test_a_file_placed_four_times_is_read_once(tmp_path, monkeypatch):
    from steelyard.io.ledger import tree as tree_mod

    reads = []
    real = tree_mod.DiskSource.read

    def counting(self):
        reads.append(self.path)
        return real(self)

    monkeypatch.setattr(tree_mod.DiskSource, "read", counting)
    work = tmp_path / "qf"
    shutil.copytree(FIXTURES / "quad-freighter", work)
    led = open_ledger(work / "quad-freighter.toml").ledger
    assert len(led.placed) == 5
    assert sorted(Path(p).name for p in reads) == ["avionics-bay.toml", "lift-pod.toml"]


# ------------------------------------------------------------------ snapshots of a tree


def test_snapshot_of_a_tree_is_self_contained_and_records_its_sources(tmp_path, capsys):
    work = tmp_path / "qf"
    shutil.copytree(FIXTURES / "quad-freighter", work)
    top = work / "quad-freighter.toml"
    out = tmp_path / "elsewhere" / "snap.toml"
    out.parent.mkdir()
    assert run_main(capsys, "snapshot", top, "--loadout", "delivery", "-o", out)[0] == 0
    code, tree_json, _ = run_main(capsys, "rollup", top, "--loadout", "delivery", "--json")
    code, snap_json, _ = run_main(capsys, "rollup", out, "--json")
    a, b = json.loads(tree_json), json.loads(snap_json)
    assert b["mass_kg"] == pytest.approx(a["mass_kg"], rel=1e-12)
    assert b["cg_m"] == pytest.approx(a["cg_m"], rel=1e-12, abs=1e-15)
    snap = open_ledger(out).ledger
    assert not snap.assemblies and not snap.placed and snap.item("pod-fl/motor") is not None
    pod_sha = hashlib.sha256((work / "pods" / "lift-pod.toml").read_bytes()).hexdigest()
    sources = {s["assembly"]: (s["file"], s["sha256"]) for s in snap.snapshot["sources"]}
    assert sources["pod-rl"] == ("pods/lift-pod.toml", pod_sha)
    # --verify says which file changed since
    (work / "pods" / "lift-pod.toml").write_text((work / "pods" / "lift-pod.toml").read_text()
                                                 .replace("mass = 142.0", "mass = 150.0"))
    code, said, err = run_main(capsys, "snapshot", "--verify", out)
    assert code == 0, err
    lines = said.splitlines()
    assert any("pods/lift-pod.toml" in x and "CHANGED" in x for x in lines)
    assert any("bays/avionics-bay.toml" in x and "unchanged" in x for x in lines)


# ------------------------------------------------------------------ diffs of trees


def test_diff_reports_a_moved_placement_with_its_effect(tmp_path, capsys):
    a = tree(tmp_path / "a", parent(ONE_POD, items='[[item]]\nid = "frame"\nmass = 7.0\ncg = [0, 0, 0]\n'),
             {"pods/pod.toml": POD})
    b = tree(tmp_path / "b", parent(ONE_POD.replace("at = [1.0, 0.5, 0.0]", "at = [1.3, 0.5, 0.0]"),
                                    items='[[item]]\nid = "frame"\nmass = 7.0\ncg = [0, 0, 0]\n'),
             {"pods/pod.toml": POD})
    code, out, err = run_main(capsys, "diff", a, b, "--json")
    assert code == 1, err  # 1: the two differ
    rec = json.loads(out)
    assert rec["changed"] == []  # the pod's items moved with it: folded into the placement
    (p,) = rec["placements"]
    assert p["id"] == "pod" and p["kind"] == "changed" and p["items_moved_with_it"] == 2
    assert p["fields"]["at"]["a"] == [1.0, 0.5, 0.0] and p["fields"]["at"]["b"] == [1.3, 0.5, 0.0]
    # exact arithmetic: 3 kg moved 0.3 m aft in a 10 kg vehicle moves the CG 0.09 m
    assert p["cg_shift_m"][0] == pytest.approx(float(Fraction(3) * Fraction("0.3") / 10), rel=1e-12)
    assert rec["delta"]["cg_m"][0] == pytest.approx(0.09, rel=1e-12)
    code, text, _ = run_main(capsys, "diff", a, b)
    assert "changed pod (pods/pod.toml)" in text and "at:" in text


def test_diff_names_the_file_of_each_item_change(tmp_path, capsys):
    a = tree(tmp_path / "a", parent(ONE_POD), {"pods/pod.toml": POD})
    b = tree(tmp_path / "b", parent(ONE_POD), {"pods/pod.toml": POD.replace("mass = 2.0", "mass = 2.5")})
    code, out, err = run_main(capsys, "diff", a, b, "--json")
    rec = json.loads(out)
    assert [(c["id"], c.get("file")) for c in rec["changed"]] == [("pod/motor", "pods/pod.toml")]
    assert rec["placements"] == []


# ------------------------------------------------------------------ merges and revisions


def test_merge_keeps_both_sides_placement_edits(tmp_path, capsys):
    base = parent(ONE_POD + 'group = "propulsion"\n')
    ours = base.replace("at = [1.0, 0.5, 0.0]", "at = [1.1, 0.5, 0.0]")
    theirs = base.replace('group = "propulsion"', 'group = "propulsion/left"')
    paths = {}
    for name, text in (("base", base), ("ours", ours), ("theirs", theirs)):
        paths[name] = tmp_path / f"{name}.toml"
        paths[name].write_text(text)
    code, _, err = run_main(capsys, "merge", paths["base"], paths["ours"], paths["theirs"])
    assert code == 0, err
    merged = paths["ours"].read_text()
    assert "at = [1.1, 0.5, 0.0]" in merged and 'group = "propulsion/left"' in merged


def test_file_at_revision_reads_its_assemblies_at_that_revision(tmp_path, capsys):
    repo = init_repo(tmp_path / "repo")
    commit(repo, {"vehicle.toml": parent(ONE_POD), "pods/pod.toml": POD}, "first", "2026-01-05T10:00:00+00:00")
    commit(repo, {"pods/pod.toml": POD.replace("mass = 2.0", "mass = 4.0")}, "heavier motor",
           "2026-02-05T10:00:00+00:00")
    code, out, err = run_main(capsys, "rollup", f"{repo / 'vehicle.toml'}@HEAD~1", "--json")
    assert code == 0, err
    assert json.loads(out)["mass_kg"] == pytest.approx(3.0, rel=1e-15)
    code, out, err = run_main(capsys, "trend", repo / "vehicle.toml", "--json")
    assert code == 0, err
    masses = [p["mass_kg"] for p in json.loads(out)["points"]]
    assert masses == [pytest.approx(3.0, rel=1e-15), pytest.approx(5.0, rel=1e-15)]


def test_placed_items_cannot_be_edited_in_the_parent(tmp_path):
    # no writer keeps an edit of a placed item, so the edit itself is refused (the file owning it is the place)
    from steelyard.core.errors import SteelyardError

    top = tree(tmp_path, parent(ONE_POD, items='[[item]]\nid = "frame"\nmass = 7.0\ncg = [0, 0, 0]\n'),
               {"pods/pod.toml": POD})
    led = open_ledger(top).ledger
    with pytest.raises(SteelyardError, match="edit it in that assembly's own file"):
        led.with_item(led.item("pod/motor").evolve(mass=9.0))
    with pytest.raises(SteelyardError, match="pod/motor"):
        led.without_item("pod/motor")
    assert led.with_item(led.item("frame").evolve(mass=8.0)).item("frame").mass == 8.0


def test_weighing_cannot_replace_a_placed_item(tmp_path, capsys):
    weighing = ('[weighing]\nreplaces = "pod/arm"\n[[weighing.point]]\nname = "nose"\nat = [0, 0, 0]\n'
                'reading = 10.0\ntare = 0.0\n')
    top = tree(tmp_path, parent(ONE_POD, items=weighing), {"pods/pod.toml": POD})
    code, _, err = run_main(capsys, "rollup", top)
    one_line_error(code, err, "weighing", "replaces", "pod/arm")
