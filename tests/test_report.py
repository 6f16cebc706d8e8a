"""`steelyard report`: caution, envelope names, escaped user text, charts, change log, sequences.

Checks against outside references: html.escape (Python standard library) for
the escaped forms, xml.etree for well-formed SVG, shapely's Polygon.covers
for each loadout's inside/outside status, and CG = Σ moment / Σ mass
(FAA-H-8083-1) for the weight statement.
"""

import html
import re
import xml.etree.ElementTree as ET
import pytest
from shapely.geometry import Point, Polygon

from steelyard.core.caution import CAUTION
from steelyard.io.report.md import md_escape
from support.cli import run_cli, run_headless
from support.ledgers import write_ledger
from support.paths import ROOT
NASTY_ITEM = '<b>Fuel & "oil"</b> <script>x()</script>'
NASTY_ENV = "normal & <wide>"

LEDGER = f"""steelyard = 1
[units]
mass = "kg"
length = "m"

[[item]]
id = "frame"
name = "Frame"
group = "structure"
mass = 40.0
cg = [1.0, 0.0, 0.2]
maturity = "layout"
tolerance = {{ mass = 1.0, cg = [0.01, 0.0, 0.0], kind = "sigma" }}

[[item]]
id = "oil-tank"
name = '{NASTY_ITEM}'
group = "fluids|*tanks*"
mass = 2.0
cg = [0.5, 0.1, 0.3]
maturity = "estimated"

[[item]]
id = "cargo"
group = "payload"
mass = 30.0
cg = [1.6, 0.0, 0.0]
variable = true

[[loadout]]
name = "light"
[loadout.set]
cargo = 0.2

[[loadout]]
name = "heavy <aft>"
[loadout.set]
cargo = 1.0

[[envelope]]
name = "{NASTY_ENV}"
axis = "x"
points = [[0.9, 30.0], [0.9, 80.0], [1.1, 80.0], [1.1, 30.0]]

[[envelope]]
name = "lateral"
axis = "y"
points = [[-0.1, 30.0], [-0.1, 80.0], [0.1, 80.0], [0.1, 30.0]]

[[change]]
time = "2026-01-10T09:00:00Z"
author = "A. Early"
action = "edit"
item = "frame"
summary = "old change before the baseline"
d_mass_kg = 0.0
d_cg_m = [0.0, 0.0, 0.0]

[[change]]
time = "2026-03-05T12:30:00Z"
author = "B. <Late>"
action = "add"
item = "oil-tank"
summary = "added the tank & its oil"
reason = "oil <system> & cooler"
request = "CR-0007"
d_mass_kg = 2.0
d_cg_m = [0.0, 0.0, 0.0]

[[sequence]]
name = "cargo drop"
loadout = "heavy <aft>"

[[sequence.step]]
remove = ["cargo"]
"""


@pytest.fixture
def ledger_path(tmp_path):
    return write_ledger(tmp_path, LEDGER, "r.toml")


def test_html_report_caution_names_and_escaping(ledger_path, tmp_path):
    out_path = tmp_path / "report.html"
    rc, _, err = run_cli("report", ledger_path, "-o", out_path, "--all", "--samples", "2000")
    assert rc == 0, err
    text = out_path.read_text()
    assert html.escape(CAUTION) in text
    for env in (NASTY_ENV, "lateral"):
        assert html.escape(env) in text
    assert html.escape(NASTY_ITEM) in text
    assert "<script>" not in text and "<b>Fuel" not in text and "<wide>" not in text
    assert html.escape("heavy <aft>") in text and html.escape("B. <Late>") in text
    assert text.count("<svg") == 2  # one chart per envelope, inline
    assert "url(\"http" not in text and "@font-face" not in text  # the page fetches nothing when opened
    for svg in re.findall(r"<svg.*?</svg>", text, flags=re.S):
        ET.fromstring(svg)  # well-formed: rich escaped the names in the picture too
    assert "Basic vs predicted" in text and "P(outside), Monte Carlo" in text  # growth and tolerances


def test_markdown_report_writes_svgs_beside_it(ledger_path, tmp_path):
    out_path = tmp_path / "out" / "review.md"
    out_path.parent.mkdir()
    rc, _, err = run_cli("report", ledger_path, "-o", out_path, "--samples", "0")
    assert rc == 0, err
    text = out_path.read_text()
    assert md_escape(CAUTION) in text
    for env in (NASTY_ENV, "lateral"):
        assert md_escape(env) in text
    assert md_escape(NASTY_ITEM) in text and "<b>" not in text and "<script>" not in text
    svgs = sorted(p.name for p in out_path.parent.glob("*.svg"))
    # named after the report and the envelope ("normal & <wide>" -> "normal-wide")
    assert svgs == ["review-envelope-lateral.svg", "review-envelope-normal-wide.svg"]
    for name in svgs:
        assert f"]({name})" in text
        ET.parse(out_path.parent / name)
    assert "```text" in text  # the text chart as a fallback


def test_statuses_agree_with_shapely(ledger_path, tmp_path):
    out_path = tmp_path / "r.md"
    assert run_cli("report", ledger_path, "-o", out_path, "--samples", "0")[0] == 0
    text = out_path.read_text()
    # loadings by hand: CG = Σ m·x / Σ m (FAA-H-8083-1)
    fixed = [(40.0, 1.0, 0.0), (2.0, 0.5, 0.1)]
    box_x = Polygon([(0.9, 30.0), (0.9, 80.0), (1.1, 80.0), (1.1, 30.0)])
    box_y = Polygon([(-0.1, 30.0), (-0.1, 80.0), (0.1, 80.0), (0.1, 30.0)])
    for name, cargo in (("light", 0.2 * 30.0), ("heavy <aft>", 30.0)):
        rows = fixed + [(cargo, 1.6, 0.0)]
        m = sum(r[0] for r in rows)
        x = sum(r[0] * r[1] for r in rows) / m
        y = sum(r[0] * r[2] for r in rows) / m
        for env, poly, c in ((NASTY_ENV, box_x, x), ("lateral", box_y, y)):
            status = "inside" if poly.covers(Point(c, m)) else "OUTSIDE"
            line = next(s for s in text.splitlines()
                        if s.startswith(f"| {md_escape(name, cell=True)} | {md_escape(env, cell=True)} |"))
            assert f"| {status} |" in line, line
    # the heavy loadout is outside the first envelope (x = 1.1967 m > 1.1 m) by the figures above
    assert "OUTSIDE" in text


def test_weight_statement_by_hand(ledger_path, tmp_path):
    out_path = tmp_path / "r.md"
    assert run_cli("report", ledger_path, "-o", out_path, "--samples", "0")[0] == 0
    text = out_path.read_text()
    # variable items empty: 40 + 2 = 42 kg, x = (40·1.0 + 2·0.5) / 42 = 0.976190 m
    total = next(s for s in text.splitlines() if s.startswith("| total | 3 |"))
    # docs/numbers.md: one count of decimals per dimension, 5 significant figures at the heaviest mass
    # shown (72 kg: 3 decimals) and at the larger of the farthest CG and 1 m (4 decimals in m)
    assert "| 42.000 |" in total
    assert f"{41 / 42:.4f}" in total


def test_since_filters_the_change_log(ledger_path, tmp_path):
    out_path = tmp_path / "r.html"
    assert run_cli("report", ledger_path, "-o", out_path, "--since", "2026-02-01", "--samples", "0")[0] == 0
    text = out_path.read_text()
    assert html.escape("added the tank & its oil") in text
    # the reason and change request have their columns, escaped (html.escape, standard library)
    assert "<th>reason</th>" in text.replace(' class="r"', "") and html.escape("oil <system> & cooler") in text
    assert "CR-0007" in text
    assert "old change before the baseline" not in text
    assert run_cli("report", ledger_path, "-o", out_path, "--samples", "0")[0] == 0
    assert "old change before the baseline" in out_path.read_text()


def test_sequence_against_envelopes(ledger_path, tmp_path):
    out_path = tmp_path / "r.md"
    rc, _, err = run_cli("report", ledger_path, "-o", out_path, "--samples", "0")
    assert rc == 0, err
    text = out_path.read_text()
    assert "## Sequences" in text and "cargo drop" in text
    try:
        import steelyard.core.loading.sequence  # noqa: F401
    except ImportError:
        assert "not evaluated" in text
        return
    # from "heavy <aft>" (72 kg, x = 89/72 m) the cargo comes off: 42 kg at x = 41/42 m (CG = Σ m·x / Σ m)
    box_x = Polygon([(0.9, 30.0), (0.9, 80.0), (1.1, 80.0), (1.1, 30.0)])
    states = [(72.0, (40 * 1.0 + 2 * 0.5 + 30 * 1.6) / 72), (42.0, 41 / 42)]
    outside = sum(not box_x.covers(Point(x, m)) for m, x in states)
    head = f"| cargo drop | heavy &lt;aft&gt; | {md_escape(NASTY_ENV, cell=True)} |"
    line = next(s for s in text.splitlines() if s.startswith(head))
    cells = [c.strip() for c in line.strip("|").split("|")]
    assert cells[3] == "2" and cells[4] == str(outside) == "1"
    # least margin: the start, 1.1 - 89/72 m: outside the aft limit (negative)
    assert cells[5] == f"{1.1 - states[0][1]:.4f}" and cells[6] == "start"  # 4 decimals in m (docs/numbers.md)


def test_loadout_choice(ledger_path, tmp_path):
    out_path = tmp_path / "r.md"
    assert run_cli("report", ledger_path, "-o", out_path, "--loadout", "light", "--samples", "0")[0] == 0
    text = out_path.read_text()
    assert "| 1 | light |" in text and "heavy" not in text.split("## Loadouts against")[1].split("##")[0]


@pytest.mark.parametrize("args,words", [
    (["--loadout", "ghost"], "ghost"),
    (["--loadout", "light", "--all"], "--all"),
    (["--since", "last tuesday"], "--since"),
])
def test_bad_options_exit_2(ledger_path, tmp_path, args, words):
    out_path = tmp_path / "r.html"
    rc, _, err = run_cli("report", ledger_path, "-o", out_path, *args)
    assert rc == 2 and words in err
    assert len(err.strip().splitlines()) == 1
    assert not out_path.exists()


def test_output_format_follows_the_name(ledger_path, tmp_path):
    rc, _, err = run_cli("report", ledger_path, "-o", tmp_path / "r.pdf")
    assert rc == 2 and ".html or .md" in err


def test_report_of_the_weighing_fixture(tmp_path):
    out_path = tmp_path / "w.html"
    rc, _, err = run_cli("report", ROOT / "fixtures" / "weighing-example.toml", "-o", out_path, "--samples", "0")
    assert rc == 0, err
    text = out_path.read_text()
    # AMT General Handbook ch. 4: empty weight 1,331.5 lb, CG 66,698 / 1,331.5 = 50.092 in
    assert "1,331.5" in text and "50.092" in text  # 5 significant figures (docs/numbers.md)
    assert html.escape(CAUTION) in text


def test_md_escape_shows_text_literally():
    # CommonMark: a backslash before ASCII punctuation makes it literal; & < > as entities
    assert md_escape("a*b_c|d") == "a\\*b\\_c\\|d"
    assert md_escape("<b>&") == "&lt;b&gt;&amp;"
    assert md_escape("1. first") == "1\\. first" and md_escape("# x") == "\\# x"
    assert md_escape("two\nlines") == "two lines"


@pytest.mark.parametrize("argv", [
    ["report", "{ledger}", "-o", "{tmp}/r.html", "--samples", "0"],
    ["weigh", str(ROOT / "fixtures" / "weighing-example.toml"), "--json"],
    ["export", "{ledger}", "--csv", "{tmp}/x.csv", "--json", "{tmp}/x.json"],
])
def test_headless_commands_do_not_import_textual(ledger_path, tmp_path, argv):
    # DESIGN.md: headless commands never import Textual
    args = [a.format(ledger=ledger_path, tmp=tmp_path) for a in argv]
    rc, _, err = run_headless(*args)
    assert rc == 0, err
    assert err.strip().endswith("CLEAN")


def test_control_characters_never_reach_the_files(tmp_path):
    # XML 1.0 forbids C0 controls but tab/newline; a report must stay well-formed and inert
    text = LEDGER.replace('name = "light"', 'name = "li\\u001b[31mght\\u0007"')
    path = write_ledger(tmp_path, text, "esc.toml")
    for name in ("e.html", "e.md"):
        rc, _, err = run_cli("report", path, "-o", tmp_path / name, "--samples", "0")
        assert rc == 0, err
        body = (tmp_path / name).read_text()
        assert "\x1b" not in body and "\x07" not in body
        assert ("li?[31mght?" if name.endswith("html") else md_escape("li?[31mght?")) in body
    for svg in tmp_path.glob("*.svg"):
        assert "\x1b" not in svg.read_text()
        ET.parse(svg)
    for svg in re.findall(r"<svg.*?</svg>", (tmp_path / "e.html").read_text(), flags=re.S):
        ET.fromstring(svg)
