"""FILE@REV: every command that reads a ledger reads it as committed; nothing writes over one.

Expected values come from git itself (`git show REV:path`, read with the
standard library's tomllib and summed in exact fractions, NIST SP 811
pound and inch) or from the same command run on the old text written out
by git, never from steelyard's own output.
"""

from __future__ import annotations

import json
import os
import subprocess
import tomllib
from fractions import Fraction
from pathlib import Path

import pytest

from support.cli import run_cli
from support.exact import close
from support.git_repo import commit, git, git_bytes, init_repo
from support.units import IN, LB

V1 = """steelyard = 1

[units]
mass = "lb"
length = "in"

[[item]]
id = "airframe"
mass = 1200
cg = [100, 0, 20]

[[item]]
id = "seat"
mass = "18.5 lb"
cg = [90, -10, 15]
quantity = 2

[[item]]
id = "fuel"
mass = 300
cg = [110, 0, 10]
variable = true

[[loadout]]
name = "cruise"

[loadout.set]
fuel = 0.5
"""
# a radio added at a station given with its own unit; the fuel station moved
V2 = V1.replace('cg = [110, 0, 10]', 'cg = [112.5, 0, 10]') + """
[[item]]
id = "radio"
mass = 2.3
cg = ["142 in", 0, 30]
"""

_MASS = {"lb": LB, "kg": Fraction(1)}  # NIST SP 811: 1 lb = 0.45359237 kg exactly
_LENGTH = {"in": IN, "m": Fraction(1)}  # NIST SP 811: 1 in = 0.0254 m exactly


def _value(v, units: dict, file_unit: Fraction) -> Fraction:
    if isinstance(v, str):
        number, unit = v.split()
        return Fraction(number) * units[unit]
    return Fraction(str(v)) * file_unit


def exact_rollup(text: str, loadout: str | None = None) -> tuple[Fraction, list[Fraction]]:
    """Mass (kg) and CG (m) of ledger text under a loadout: CG = Σ m·arm / Σ m (FAA-H-8083-1), exact."""
    data = tomllib.loads(text)
    fm = _MASS[data["units"]["mass"]]
    fl = _LENGTH[data["units"]["length"]]
    sets = next((lo.get("set", {}) for lo in data.get("loadout", []) if lo["name"] == loadout), {})
    mass, moment = Fraction(0), [Fraction(0)] * 3
    for it in data["item"]:
        m = _value(it["mass"], _MASS, fm) * it.get("quantity", 1)
        if it.get("variable"):
            m *= Fraction(str(sets.get(it["id"], 0)))
        mass += m
        for k in range(3):
            moment[k] += m * _value(it["cg"][k], _LENGTH, fl)
    return mass, [mk / mass for mk in moment]


@pytest.fixture
def repo(tmp_path) -> Path:
    """f.toml: V1 committed, then V2 committed, then an uncommitted edit in the working tree."""
    root = init_repo(tmp_path / "repo")
    commit(root, {"f.toml": V1}, "first estimate", "2026-01-05T10:00:00+01:00")
    commit(root, {"f.toml": V2, "notes.txt": "radio added\n"}, "radio", "2026-01-20T09:30:00+01:00")
    (root / "f.toml").write_text(V2.replace("mass = 1200", "mass = 1250"))  # not committed
    return root


def _in(folder: Path, *args):
    """run_cli from inside `folder`, so FILE@REV can be written relative as a user would."""
    here = os.getcwd()
    os.chdir(folder)
    try:
        return run_cli(*args)
    finally:
        os.chdir(here)


def one_line_error(err: str) -> str:
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith("steelyard: "), err
    return lines[0]


def test_rollup_at_a_revision_is_the_rollup_of_the_file_as_it_was(repo, tmp_path):
    old = tmp_path / "old.toml"
    old.write_bytes(git_bytes(repo, "show", "HEAD~1:f.toml"))  # the text as committed, written out by git
    code, at_rev, err = _in(repo, "rollup", "f.toml@HEAD~1", "--json", "--loadout", "cruise")
    assert code == 0, err
    code, as_file, err = run_cli("rollup", old, "--json", "--loadout", "cruise")
    assert code == 0, err
    assert json.loads(at_rev) == json.loads(as_file)
    mass, cg = exact_rollup(V1, "cruise")
    record = json.loads(at_rev)
    assert close(record["mass_kg"], mass) and all(close(c, e) for c, e in zip(record["cg_m"], cg) if e)


def test_head_is_the_committed_text_not_the_working_file(repo):
    code, out, err = _in(repo, "rollup", "f.toml@HEAD", "--json")
    assert code == 0, err
    committed = git(repo, "show", "HEAD:f.toml")  # git's own copy, not the edited working file
    mass, _ = exact_rollup(committed)
    assert close(json.loads(out)["mass_kg"], mass)
    working, _ = exact_rollup((repo / "f.toml").read_text())
    assert not close(json.loads(out)["mass_kg"], working)


def test_tags_hashes_and_absolute_paths_name_revisions(repo):
    git(repo, "tag", "v1.2", "HEAD~1")
    first = git(repo, "rev-parse", "HEAD~1").strip()
    expect, _ = exact_rollup(V1)
    for spec in ("f.toml@v1.2", f"f.toml@{first}", f"f.toml@{first[:8]}", f"{repo / 'f.toml'}@v1.2"):
        code, out, err = _in(repo, "rollup", spec, "--json")
        assert code == 0, (spec, err)
        assert close(json.loads(out)["mass_kg"], expect), spec


def test_a_subfolder_file_is_found_at_its_path_in_the_repository(repo):
    commit(repo, {"vehicles/g.toml": V1}, "a second vehicle", "2026-02-01T12:00:00Z")
    code, out, err = _in(repo / "vehicles", "rollup", "g.toml@HEAD", "--json")
    assert code == 0, err
    assert close(json.loads(out)["mass_kg"], exact_rollup(V1)[0])


def test_an_unknown_revision_is_one_line_naming_it(repo):
    code, out, err = _in(repo, "rollup", "f.toml@no-such-tag")
    assert code == 2 and out == ""
    line = one_line_error(err)
    assert "f.toml@no-such-tag" in line and "unknown revision 'no-such-tag'" in line


def test_a_file_missing_from_the_revision_is_one_line_naming_it(repo):
    commit(repo, {"late.toml": V1}, "added later", "2026-02-01T12:00:00Z")
    code, _, err = _in(repo, "check", "late.toml@HEAD~1")
    assert code == 2
    line = one_line_error(err)
    assert "late.toml@HEAD~1" in line and "no file 'late.toml' in revision 'HEAD~1'" in line


def test_outside_a_repository_is_one_line(tmp_path):
    plain = tmp_path / "plain"
    plain.mkdir()
    (plain / "f.toml").write_text(V1)
    env_ceiling = os.environ.get("GIT_CEILING_DIRECTORIES")
    os.environ["GIT_CEILING_DIRECTORIES"] = str(tmp_path)  # tmp_path may sit inside some repository
    try:
        code, _, err = _in(plain, "rollup", "f.toml@HEAD")
    finally:
        if env_ceiling is None:
            os.environ.pop("GIT_CEILING_DIRECTORIES")
        else:
            os.environ["GIT_CEILING_DIRECTORIES"] = env_ceiling
    assert code == 2
    line = one_line_error(err)
    assert "f.toml@HEAD" in line and "not in a git repository" in line


def test_a_revision_that_looks_like_an_option_is_refused(repo):
    code, _, err = _in(repo, "rollup", "f.toml@--output=x")
    assert code == 2 and "not a revision name" in one_line_error(err)
    assert not (repo / "x").exists()


def test_a_path_with_an_at_sign_that_exists_is_a_path(repo):
    (repo / "v@2.toml").write_text(V1)
    code, out, err = _in(repo, "rollup", "v@2.toml", "--json")
    assert code == 0, err
    assert close(json.loads(out)["mass_kg"], exact_rollup(V1)[0])


def test_a_ledger_deleted_since_is_read_at_its_revision(repo):
    git(repo, "rm", "-qf", "f.toml")
    git(repo, "commit", "-q", "-m", "retired", date="2026-03-01T00:00:00Z")
    assert not (repo / "f.toml").exists()
    code, out, err = _in(repo, "rollup", "f.toml@HEAD~1", "--json")
    assert code == 0, err
    assert close(json.loads(out)["mass_kg"], exact_rollup(V2)[0])
    code, _, err = _in(repo, "rollup", "f.toml@HEAD")
    assert code == 2 and "no file 'f.toml' in revision 'HEAD'" in one_line_error(err)


def test_diff_splits_file_at_rev_and_loadout(repo):
    code, out, err = _in(repo, "diff", "f.toml@HEAD~1:cruise", "f.toml@HEAD:cruise", "--json")
    assert code == 1, err  # different (diff(1) convention)
    record = json.loads(out)
    assert record["a_source"] == {"file": "f.toml@HEAD~1", "loadout": "cruise", "snapshot": False}
    assert record["b_source"]["file"] == "f.toml@HEAD"
    assert record["added"] == ["radio"]
    code, out, err = _in(repo, "diff", "f.toml@HEAD~1", "f.toml@HEAD~1")
    assert code == 0, err
    code, _, err = _in(repo, "diff", "f.toml@HEAD~1:nope", "f.toml")
    assert code == 2 and "no loadout named 'nope'" in one_line_error(err)


def test_check_export_report_and_solve_read_revisions(repo, tmp_path):
    code, out, err = _in(repo, "check", "f.toml@HEAD~1", "--json")
    assert code == 0, err
    assert json.loads(out)["file"] == "f.toml@HEAD~1"
    code, out, err = _in(repo, "export", "f.toml@HEAD~1", "--csv", "-")
    assert code == 0, err
    assert "radio" not in out and "airframe" in out  # V1 had no radio
    code, out, err = _in(repo, "solve", "add", "f.toml@HEAD~1", "--mass", "10 lb", "--station", "100 in",
                         "--json")
    assert code == 0, err
    report = tmp_path / "r.html"
    code, _, err = _in(repo, "report", "f.toml@HEAD~1", "-o", report)
    assert code == 0, err
    assert "Mass-properties report: f.toml@HEAD~1" in report.read_text()


def test_snapshot_of_a_revision_writes_elsewhere_and_verifies(repo, tmp_path):
    out = tmp_path / "x.toml"
    code, _, err = _in(repo, "snapshot", "f.toml@HEAD", "-o", out, "--loadout", "cruise")
    assert code == 0, err
    code, _, err = run_cli("snapshot", "--verify", out)
    assert code == 0, err
    code, rolled, err = run_cli("rollup", out, "--json")
    assert code == 0, err
    mass, _ = exact_rollup(git(repo, "show", "HEAD:f.toml"), "cruise")
    assert close(json.loads(rolled)["mass_kg"], mass)


@pytest.mark.parametrize("args", [
    ("weigh", "--apply", "f.toml@HEAD"),
    ("import", "items.csv", "-o", "f.toml@HEAD", "--force"),
    ("snapshot", "f.toml", "-o", "f.toml@HEAD", "--force"),
])
def test_nothing_writes_over_a_revision(repo, args):
    (repo / "items.csv").write_text("id,mass [kg],x [m],y [m],z [m]\nbox,1,0,0,0\n")
    before = {p.name: p.read_bytes() for p in repo.iterdir() if p.is_file()}
    code, _, err = _in(repo, *args)
    assert code == 2
    line = one_line_error(err)
    assert "f.toml@HEAD" in line and "never written back" in line
    after = {p.name: p.read_bytes() for p in repo.iterdir() if p.is_file()}
    assert after == before  # no file written, changed, or left behind (no lock, no temporary)


async def test_the_editor_opens_a_revision_read_only(repo):
    from support.tui import editor, settle

    on_disk = (repo / "f.toml").read_bytes()
    before = sorted(p.name for p in repo.iterdir())
    async with editor(repo / "f.toml@HEAD~1") as (app, pilot):
        s = app.session
        assert s.read_only and s.lock is None and "read-only" in app.title
        assert [it.id for it in s.ledger.items] == [it["id"] for it in tomllib.loads(V1)["item"]]
        await pilot.press("ctrl+s")
        await settle(pilot, app)
    assert (repo / "f.toml").read_bytes() == on_disk
    assert sorted(p.name for p in repo.iterdir()) == before


def test_a_revision_reads_other_files_at_the_same_commit(repo):
    from steelyard.core.errors import SteelyardError
    from steelyard.io.vcs.revision import revision_of

    commit(repo, {"pods/pod.toml": V1}, "pod", "2026-02-01T12:00:00Z")
    commit(repo, {"pods/pod.toml": V2}, "pod changed", "2026-02-02T12:00:00Z")
    rev = revision_of(str(repo / "f.toml@HEAD~1"))
    assert rev.relative("pods/pod.toml").read() == git_bytes(repo, "show", "HEAD~1:pods/pod.toml")
    with pytest.raises(SteelyardError, match="outside the repository"):
        rev.relative("../../elsewhere.toml")


def test_git_runs_without_a_shell_and_in_the_file_folder(repo, monkeypatch):
    """Every git call is an argument list with -C and LC_ALL=C (POSIX: no shell parses a revision)."""
    import steelyard.io.vcs.git as g
    from steelyard.io.ledger.file import open_ledger

    calls = []
    real = subprocess.run

    def spy(argv, *a, **kw):
        calls.append((argv, kw))
        return real(argv, *a, **kw)

    monkeypatch.setattr(g.subprocess, "run", spy)
    loaded = open_ledger(str(repo / "f.toml@HEAD~1"))
    assert [it.id for it in loaded.ledger.items] == ["airframe", "seat", "fuel"]
    assert calls
    for argv, kw in calls:
        assert isinstance(argv, list) and argv[:2] == ["git", "-C"] and not kw.get("shell")
        assert kw["env"]["LC_ALL"] == "C" and kw["timeout"] > 0
