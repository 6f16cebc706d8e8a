"""`steelyard trend`: one point per commit that changed the ledger, each checked by hand.

The repository is real (git init in tmp_path, fixed commit dates). Every
point is compared with an independent computation of that revision: the
text from `git show REV:path`, parsed by the standard library's tomllib and
summed in exact fractions with the NIST SP 811 factors (1 lb = 0.45359237
kg, 1 in = 0.0254 m); CG = Σ m·arm / Σ m (FAA-H-8083-1); predicted mass =
basic mass + growth allowance, each item's allowance its explicit `growth`
fraction of its basic mass (the concept of AIAA S-120A); margin =
allocation - predicted. Commits, dates and subjects come from `git log`.
"""

from __future__ import annotations

import json
from decimal import ROUND_HALF_EVEN, Decimal
import os
import subprocess
import tomllib
from fractions import Fraction
from pathlib import Path

import pytest

from support.cli import run_cli, run_headless
from support.exact import close
from support.git_repo import commit, git, init_repo
from support.units import IN, LB

T1 = """steelyard = 1

[units]
mass = "lb"
length = "in"

[[item]]
id = "airframe"
group = "structure"
mass = 1200
cg = [100, 0, 20]
growth = 0.1

[[item]]
id = "seat"
group = "cabin"
mass = "18.5 lb"
cg = [90, -10, 15]
quantity = 2
growth = 0.1

[[item]]
id = "gps"
group = "avionics/nav"
mass = 4.25
cg = [60, 5, 25]

[[item]]
id = "fuel"
group = "fuel"
mass = 300
cg = [110, 0, 10]
variable = true

[[loadout]]
name = "trip"

[loadout.set]
fuel = 0.5

[[allocation]]
group = ""
mass = 1500

[[allocation]]
group = "avionics"
mass = "10 lb"
"""
# a radio at a station with its own unit, growth on it too
T2 = T1.replace("[[loadout]]", """[[item]]
id = "radio"
group = "avionics/com"
mass = 2.3
cg = ["142 in", 0, 30]
growth = 0.1

[[loadout]]""", 1)
BROKEN = T2.replace("mass = 2.3", 'mass = "heavy"')
# the same vehicle re-entered in SI with a new budget
T3 = """steelyard = 1

[units]
mass = "kg"
length = "m"

[[item]]
id = "airframe"
group = "structure"
mass = 560.25
cg = [2.5, 0, 0.5]
growth = 0.1

[[item]]
id = "gps"
group = "avionics/nav"
mass = "4.25 lb"
cg = [1.5, 0.1, 0.6]

[[allocation]]
group = ""
mass = "700 kg"
"""
NOTES = "weighing planned for March\n"

_MASS = {"lb": LB, "kg": Fraction(1)}  # NIST SP 811: 1 lb = 0.45359237 kg exactly
_LENGTH = {"in": IN, "m": Fraction(1)}  # NIST SP 811: 1 in = 0.0254 m exactly


def _value(v, units: dict, file_unit: Fraction) -> Fraction:
    if isinstance(v, str):
        number, unit = v.split()
        return Fraction(number) * units[unit]
    return Fraction(str(v)) * file_unit


def by_hand(text: str, *, group: str = "", loadout: str | None = None) -> dict:
    """The trend point of one revision's text, exact: mass, CG, predicted, allocation, margin (SI)."""
    data = tomllib.loads(text)
    fm, fl = _MASS[data["units"]["mass"]], _LENGTH[data["units"]["length"]]
    sets = next((lo.get("set", {}) for lo in data.get("loadout", []) if lo["name"] == loadout), {})
    mass, predicted, moment = Fraction(0), Fraction(0), [Fraction(0)] * 3
    grows = any("growth" in it for it in data["item"])  # the ledger speaks of growth: predicted is given
    for it in data["item"]:
        g = it.get("group", "")
        if group and not (g == group or g.startswith(group + "/")):
            continue
        m = _value(it["mass"], _MASS, fm) * it.get("quantity", 1)
        if it.get("variable"):
            m *= Fraction(str(sets.get(it["id"], 0)))
        mass += m
        predicted += m * (1 + Fraction(str(it.get("growth", 0))))  # basic + growth allowance
        for k in range(3):
            moment[k] += m * _value(it["cg"][k], _LENGTH, fl)
    budget = next((a["mass"] for a in data.get("allocation", []) if a["group"] == group), None)
    allocation = None if budget is None else _value(budget, _MASS, fm)
    return {"mass": mass, "cg": [mk / mass for mk in moment] if mass else None,
            "predicted": predicted if grows else None, "allocation": allocation,
            "margin": None if allocation is None else allocation - (predicted if grows else mass)}


@pytest.fixture
def repo(tmp_path) -> Path:
    root = init_repo(tmp_path / "repo")
    commit(root, {"f.toml": T1}, "first estimate", "2026-01-05T10:00:00+01:00")
    commit(root, {"notes.txt": NOTES}, "notes only", "2026-01-12T08:00:00Z")  # does not touch f.toml
    commit(root, {"f.toml": T2}, "radio added", "2026-01-20T09:30:00-05:00")
    commit(root, {"f.toml": BROKEN}, "half-typed edit", "2026-02-01T12:00:00Z")
    commit(root, {"f.toml": T3}, "re-entered in SI", "2026-02-10T12:00:00Z")
    commit(root, {"f.toml": T2}, "back to the radio version", "2026-02-15T12:00:00Z")
    return root


def _in(folder: Path, *args):
    here = os.getcwd()
    os.chdir(folder)
    try:
        return run_cli(*args)
    finally:
        os.chdir(here)


def history(repo: Path) -> list[tuple[str, str, str]]:
    """(hash, committer date, subject) of each commit that changed f.toml, oldest first, from git."""
    out = git(repo, "log", "--reverse", "--format=%H%x1f%cI%x1f%s", "--", "f.toml")
    return [tuple(line.split("\x1f")) for line in out.splitlines()]


def check_point(point: dict, text: str, **kw) -> None:
    want = by_hand(text, **kw)
    assert close(point["mass_kg"], want["mass"])
    assert all(close(c, e) if e else abs(c) < 1e-12 for c, e in zip(point["cg_m"], want["cg"]))
    for key, name in (("predicted_kg", "predicted"), ("allocation_kg", "allocation")):
        assert (point[key] is None) == (want[name] is None), key
        if want[name] is not None:
            assert close(point[key], want[name]), key
    assert (point["margin_kg"] is None) == (want["margin"] is None)
    if want["margin"] is not None:  # a difference: compared to a thousandth of a gram, not relatively
        assert abs(Fraction(point["margin_kg"]) - want["margin"]) < Fraction(1, 10**6)


def test_every_point_matches_its_revision_by_hand(repo):
    code, out, err = _in(repo, "trend", "f.toml", "--json")
    assert code == 0, err
    record = json.loads(out)
    assert set(record) == {"points", "skipped"}
    log = history(repo)
    assert "notes only" not in [s for _, _, s in log]  # git agrees the notes commit left f.toml alone
    broken = [h for h, _, s in log if s == "half-typed edit"]
    assert [p["rev"] for p in record["points"]] == [h for h, _, _ in log if h not in broken]
    assert [(s["rev"], "heavy" in s["reason"] and "radio" in s["reason"]) for s in record["skipped"]] == \
        [(broken[0], True)]
    for point, (rev, date, subject) in zip(record["points"], [x for x in log if x[0] not in broken]):
        assert set(point) == {"rev", "date", "subject", "mass_kg", "cg_m", "predicted_kg", "allocation_kg",
                              "margin_kg"}
        assert (point["date"], point["subject"]) == (date, subject)
        check_point(point, git(repo, "show", f"{rev}:f.toml"))


def test_predicted_is_basic_plus_ten_percent_growth_on_the_items_that_carry_it(repo):
    code, out, _ = _in(repo, "trend", "f.toml", "--json")
    first = json.loads(out)["points"][0]
    airframe, seats = 1200 * LB, 2 * Fraction("18.5") * LB  # items with growth = 0.1
    gps = Fraction("4.25") * LB  # no growth key: no allowance
    assert close(first["mass_kg"], airframe + seats + gps)
    assert close(first["predicted_kg"], (airframe + seats) * Fraction("1.1") + gps)
    assert close(first["allocation_kg"], 1500 * LB)


def test_a_group_has_its_own_masses_and_allocation(repo):
    code, out, err = _in(repo, "trend", "f.toml", "--group", "avionics", "--json")
    assert code == 0, err
    points = json.loads(out)["points"]
    for point in points:
        check_point(point, git(repo, "show", f"{point['rev']}:f.toml"), group="avionics")
    assert points[0]["predicted_kg"] is not None and close(points[0]["allocation_kg"], 10 * LB)
    assert points[2]["allocation_kg"] is None  # the SI version has no avionics budget


def test_a_loadout_is_applied_at_every_revision_and_missing_ones_are_skipped(repo):
    code, out, err = _in(repo, "trend", "f.toml", "--loadout", "trip", "--json")
    assert code == 0, err
    record = json.loads(out)
    for point in record["points"]:
        check_point(point, git(repo, "show", f"{point['rev']}:f.toml"), loadout="trip")
    si = [h for h, _, s in history(repo) if s == "re-entered in SI"][0]
    assert any(s["rev"] == si and "no loadout named 'trip'" in s["reason"] for s in record["skipped"])


def test_since_and_until_keep_commits_in_the_range(repo):
    code, out, err = _in(repo, "trend", "f.toml", "--json", "--since", "2026-01-15", "--until", "2026-02-10")
    assert code == 0, err
    record = json.loads(out)
    subjects = {s for _, _, s in history(repo)}
    got = [p["subject"] for p in record["points"]] + [next(s for h, _, s in history(repo) if h == k["rev"])
                                                      for k in record["skipped"]]
    # 2026-01-20T09:30-05:00 is inside; 2026-02-10T12:00Z is inside: a date alone takes in its whole day
    assert sorted(got) == sorted(["radio added", "half-typed edit", "re-entered in SI"])
    assert set(got) <= subjects
    code, _, err = _in(repo, "trend", "f.toml", "--since", "tomorrow")
    assert code == 2 and "--since" in err


def test_text_shows_every_commit_and_the_reason_one_was_not_read(repo):
    code, out, err = _in(repo, "trend", "f.toml")
    assert code == 0, err
    lines = out.splitlines()
    for rev, _, subject in history(repo):
        row = next(ln for ln in lines if rev[:7] in ln)
        assert subject.split()[0] in row
    broken = next(h for h, _, s in history(repo) if s == "half-typed edit")
    assert "not read" in next(ln for ln in lines if broken[:7] in ln)
    assert any("\u2800" < ch <= "\u28ff" for ch in out)  # the braille chart
    assert "basic mass" in out and "predicted" in out and "allocation" in out
    code, _, err = run_headless("trend", repo / "f.toml")
    assert code == 0 and err.splitlines()[-1] == "CLEAN"  # a headless command never imports Textual


def test_outside_a_repository_is_exit_2_one_line(tmp_path, monkeypatch):
    folder = tmp_path / "plain"
    folder.mkdir()
    (folder / "f.toml").write_text(T1)
    monkeypatch.setenv("GIT_CEILING_DIRECTORIES", str(tmp_path))  # tmp_path may sit inside a repository
    code, out, err = _in(folder, "trend", "f.toml", "--json")
    assert code == 2 and out == ""
    assert err.strip().count("\n") == 0 and "f.toml" in err and "not in a git repository" in err


def test_a_file_never_committed_has_no_points(repo):
    (repo / "new.toml").write_text(T1)
    code, out, err = _in(repo, "trend", "new.toml", "--json")
    assert code == 0, err
    assert json.loads(out) == {"points": [], "skipped": []}


def test_file_at_rev_follows_history_up_to_that_revision(repo):
    code, out, err = _in(repo, "trend", "f.toml@HEAD~2", "--json")
    assert code == 0, err
    upto = git(repo, "log", "--reverse", "--format=%H", "HEAD~2", "--", "f.toml").split()
    record = json.loads(out)
    assert sorted([p["rev"] for p in record["points"]] + [s["rev"] for s in record["skipped"]]) == sorted(upto)


def test_two_git_processes_and_each_blob_read_once(repo, monkeypatch):
    """One `git log`, one `git cat-file --batch`; the revision that went back to an older text reuses it."""
    import steelyard.io.vcs.git as g
    import steelyard.io.vcs.history as h
    import steelyard.io.vcs.ledger_at as la

    runs, pipes, parsed = [], [], []
    real_run, real_popen, real_parse = subprocess.run, subprocess.Popen, la.ledger_from_bytes

    def run(argv, *a, **kw):
        runs.append(argv)
        return real_run(argv, *a, **kw)

    def popen(argv, *a, **kw):
        pipes.append(argv)
        return real_popen(argv, *a, **kw)

    def parse(data, **kw):
        parsed.append(data)
        return real_parse(data, **kw)

    monkeypatch.setattr(g.subprocess, "run", run)
    monkeypatch.setattr(h.subprocess, "Popen", popen)
    monkeypatch.setattr(la, "ledger_from_bytes", parse)
    trend = la.trend_of(str(repo / "f.toml"))
    assert len(trend.points) == 5
    assert sum("log" in argv for argv in runs) == 1
    batches = [argv for argv in pipes if "cat-file" in argv]  # subprocess.run starts a Popen too
    assert len(batches) == 1 and batches[0][-2:] == ["cat-file", "--batch"]
    assert len(pipes) == len(runs) + 1  # no other git process: the runs (rev-parse, log) and the batch
    blobs = {git(repo, "rev-parse", f"{rev}:f.toml").strip() for rev, _, _ in history(repo)}
    assert len(parsed) == len(blobs) == 4  # five commits, four distinct texts (the last repeats the second)


def test_the_report_gains_the_history(repo, tmp_path):
    html, md = tmp_path / "r.html", tmp_path / "r.md"
    for out in (html, md):
        code, _, err = _in(repo, "report", "f.toml", "-o", out)
        assert code == 0, err
    page = html.read_text()
    assert "Mass history (git)" in page
    svg = page[page.index("<svg", page.index("Mass history (git)")):]
    svg = svg[:svg.index("</svg>")]
    assert svg.count("<polyline") == 3 and "mass [lb]" in svg and "commit date" in svg
    assert "basic mass" in svg and "predicted" in svg and "allocation" in svg
    text = md.read_text()
    assert "## Mass history (git)" in text
    for rev, _, _ in history(repo):
        assert rev[:7] in text
    first = by_hand(T1)
    # the first commit's mass in the file's pounds, by the number rule (docs/numbers.md): 5 significant
    # figures of the column's largest value (every mass here is in the thousands of pounds: 1 decimal)
    assert f"{Decimal(repr(float(first['mass'] / LB))).quantize(Decimal('0.1'), ROUND_HALF_EVEN):,f}" in text
    # Markdown: the history chart is a file named after the report, linked from it, and well-formed XML
    assert "![mass history](r-mass-trend.svg)" in text
    import xml.etree.ElementTree as ET

    root = ET.parse(tmp_path / "r-mass-trend.svg").getroot()  # xml.etree: the standard library's XML parser
    assert root.tag == "{http://www.w3.org/2000/svg}svg" and len(root.findall(".//{*}polyline")) == 3


def test_a_report_outside_git_has_no_history(tmp_path, monkeypatch):
    monkeypatch.setenv("GIT_CEILING_DIRECTORIES", str(tmp_path))
    (tmp_path / "f.toml").write_text(T1)
    code, _, err = run_cli("report", tmp_path / "f.toml", "-o", tmp_path / "r.md")
    assert code == 0, err
    assert "Mass history" not in (tmp_path / "r.md").read_text()
    assert not (tmp_path / "r-mass-trend.svg").exists()


async def test_the_editor_shows_the_history(repo):
    from steelyard.tui.screens.trend_screen import TrendScreen
    from support.tui import editor, screen_text, wait_for_screen

    async with editor(repo / "f.toml", size=(120, 40)) as (app, pilot):
        app.action_trend()
        await wait_for_screen(app, pilot, TrendScreen)
        shown = ""
        for _ in range(200):
            await pilot.pause(0.05)
            shown = screen_text(app)
            if "oldest first" in shown:
                break
        assert "5 commits changed it" in shown, shown
        for rev, _, _ in history(repo):
            assert rev[:7] in shown
        await pilot.press("escape")
        await pilot.pause()
        assert not isinstance(app.screen, TrendScreen)


def test_versions_read_in_pieces_through_one_memory_are_each_by_hand(repo, monkeypatch):
    # every text cut every few items, so each version takes its unchanged item tables from the one before
    # (io.ledger.read_reuse); each point still matches its revision by hand, and the run without reuse
    from steelyard.io.ledger import read_reuse, toml_chunks
    from steelyard.io.vcs.ledger_at import trend_of

    monkeypatch.setattr(toml_chunks, "CHUNK_CHARS", 200)
    here = os.getcwd()
    os.chdir(repo)
    try:
        taken: list[int] = []
        assemble = read_reuse._Reading.assemble

        def counted(self, items, arrays):
            got = assemble(self, items, arrays)
            taken.append(self.memory.reused)
            return got

        monkeypatch.setattr(read_reuse._Reading, "assemble", counted)
        reused = trend_of("f.toml")
        monkeypatch.setattr(read_reuse.ReadMemory, "start",
                            lambda self, head, fast: read_reuse._Reading(self, head, fast, None))
        fresh = trend_of("f.toml")
    finally:
        os.chdir(here)
    assert any(taken)  # some version took tables from the one before it
    assert reused == fresh
    for p in reused.points:
        if p.figures is None:
            continue
        f = p.figures
        check_point({"mass_kg": f.mass_kg, "cg_m": list(f.cg_m), "predicted_kg": f.predicted_kg,
                     "allocation_kg": f.allocation_kg, "margin_kg": f.margin_kg}, git(repo, "show", f"{p.rev}:f.toml"))
