"""The report's vector charts: the data-to-pixel map, nice ticks, file names, escaping.

References outside the program:
- xml.etree.ElementTree (Python standard library) parses every chart: a file
  it refuses is not well-formed XML 1.0;
- the affine map from data to pixels is recomputed here with exact fractions
  from the plot box the SVG declares and the range rule the module documents
  (each side widened by 6 % of the span), and separately from the tick labels
  (two ticks fix the map; every vertex must sit on it);
- "nice" ticks are steps of 1, 2 or 5 x 10^n, each tick a whole multiple of
  the step (common practice for chart axes);
- XML 1.0 (W3C, 5th edition) section 2.2: the characters a document may hold;
  section 2.4: `<` and `&` must be escaped in character data.
"""

from __future__ import annotations

import random
import xml.etree.ElementTree as ET
from fractions import Fraction as F

import numpy as np
import pytest

from steelyard.io.report.build import Chart
from steelyard.io.report.svg_envelope import envelope_svg
from support.cli import run_cli
from support.ledgers import write_ledger

NS = "{http://www.w3.org/2000/svg}"
HALF_PIXEL = F(1, 100)  # coordinates are written with two decimals: within 0.005 px, say 0.01


def chart(polygon, points=(), paths=(), name="normal", label="takeoff") -> Chart:
    return Chart(name, "x", ["(text)"], [], np.asarray(polygon, dtype=float),
                 tuple((m, label, x, w, ins) for m, x, w, ins in points), (), tuple(paths),
                 "CG x (+aft) [in]", "mass [lb]")


def parse(svg: str) -> ET.Element:
    return ET.fromstring(svg)


def pairs(text: str) -> list[tuple[F, F]]:
    return [(F(a), F(b)) for a, b in (p.split(",") for p in text.split())]


def plot_box(root) -> tuple[F, F, F, F]:
    r = next(e for e in root.iter(f"{NS}rect") if e.get("class") == "plot-area")
    left, top = F(r.get("x")), F(r.get("y"))
    return left, top, left + F(r.get("width")), top + F(r.get("height"))


def ticks_of(root, cls: str) -> list[tuple[F, F]]:
    """(value, pixel) of each labelled tick of one axis."""
    out = []
    for t in root.iter(f"{NS}text"):
        if t.get("class") == cls:
            pos = F(t.get("x")) if cls == "tick-x" else F(t.get("y")) - 4  # labels sit 4 px below their line
            out.append((F(t.text.replace(",", "")), pos))
    return out


def test_polygon_vertices_map_to_their_data_coordinates():
    poly = [(124.0, 1150.0), (124.0, 1450.0), (126.5, 1760.0), (132.0, 1760.0), (132.0, 1150.0)]
    root = parse(envelope_svg(chart(poly)))
    (env,) = [e for e in root.iter(f"{NS}polygon") if e.get("class") == "envelope"]
    got = pairs(env.get("points"))
    left, top, right, bottom = plot_box(root)
    # by hand: x spans 124..132 (8 in), widened by 6 % of 8 = 0.48 each side; mass 1150..1760 (610 lb), by 36.6
    x0, x1 = F("124") - F("0.48"), F("132") + F("0.48")
    y0, y1 = F("1150") - F("36.6"), F("1760") + F("36.6")
    for (x, y), (px, py) in zip(poly, got):
        want_x = left + (F(x) - x0) / (x1 - x0) * (right - left)
        want_y = bottom - (F(y) - y0) / (y1 - y0) * (bottom - top)
        assert abs(px - want_x) <= HALF_PIXEL and abs(py - want_y) <= HALF_PIXEL, ((x, y), (px, py))
    # the first vertex worked through: 84 + 0.48 / 8.96 * 656 = 119.142857... px (plot box 84..740 px)
    if (left, right) == (84, 740):
        assert abs(got[0][0] - F(119142857, 10**6)) <= HALF_PIXEL
    # and the same map from the tick labels alone: two ticks fix it, every vertex sits on it
    for axis, k, cls in (("x", 0, "tick-x"), ("y", 1, "tick-y")):
        t = ticks_of(root, cls)
        (v0, p0), (v1, p1) = t[0], t[-1]
        scale = (p1 - p0) / (v1 - v0)
        for v, p in t:
            assert abs(p0 + (v - v0) * scale - p) <= 2 * HALF_PIXEL, (axis, v)
        for vertex, pixel in zip(poly, got):
            assert abs(p0 + (F(vertex[k]) - v0) * scale - pixel[k]) <= 3 * HALF_PIXEL, (axis, vertex)


def test_points_and_sequence_paths_are_drawn_where_they_are():
    poly = [(0.9, 30.0), (0.9, 80.0), (1.1, 80.0), (1.1, 30.0)]
    path = np.array([[1.0, 72.0], [0.98, 60.0], [0.976, 42.0]])
    root = parse(envelope_svg(chart(poly, points=[("1", 1.0, 50.0, True), ("2", 1.2, 72.0, False)],
                                    paths=[("a", "cargo drop", "heavy", path)])))
    left, top, right, bottom = plot_box(root)
    # every drawn thing: x 0.9..1.2 (0.3, pad 0.018), mass 30..80 (50, pad 3), by hand
    x0, x1, y0, y1 = F("0.882"), F("1.218"), F(27), F(83)

    def px(x, y):
        return (left + (F(x) - x0) / (x1 - x0) * (right - left), bottom - (F(y) - y0) / (y1 - y0) * (bottom - top))

    (seq,) = [e for e in root.iter(f"{NS}polyline") if e.get("class") == "sequence"]
    for (x, y), (gx, gy) in zip(path.tolist(), pairs(seq.get("points"))):
        wx, wy = px(x, y)
        assert abs(gx - wx) <= HALF_PIXEL and abs(gy - wy) <= HALF_PIXEL
    loadings = [g for g in root.iter(f"{NS}g") if g.get("class") == "loading"]
    circle = loadings[0].find(f"{NS}circle")  # inside: a dot
    wx, wy = px(1.0, 50.0)
    assert abs(F(circle.get("cx")) - wx) <= HALF_PIXEL and abs(F(circle.get("cy")) - wy) <= HALF_PIXEL
    square = loadings[1].find(f"{NS}rect")  # outside: a square, and the word in the legend
    wx, wy = px(1.2, 72.0)
    assert abs(F(square.get("x")) + F(9, 2) - wx) <= HALF_PIXEL
    legend = " ".join(t.text for t in root.iter(f"{NS}text") if t.text)
    assert "2: takeoff: OUTSIDE" in legend and "1: takeoff: inside" in legend and "cargo drop" in legend
    assert "CG x (+aft) [in]" in legend and "mass [lb]" in legend  # axis labels with units


@pytest.mark.parametrize("seed", range(12))
def test_ticks_are_nice(seed):
    rng = random.Random(seed)
    lo = rng.uniform(-1e4, 1e4) * 10 ** rng.randint(-4, 2)
    span = rng.uniform(0.001, 5000) * 10 ** rng.randint(-3, 1)
    poly = [(lo, 10 * lo + 1), (lo, 10 * lo + 1 + span * 3), (lo + span, 10 * lo + 1 + span * 3)]
    root = parse(envelope_svg(chart(poly)))
    for cls in ("tick-x", "tick-y"):
        values = [v for v, _ in ticks_of(root, cls)]
        assert 2 <= len(values) <= 12, values
        steps = {b - a for a, b in zip(values, values[1:])}
        assert len(steps) == 1, values  # evenly spaced
        (step,) = steps
        mantissa = step
        while mantissa >= 10:
            mantissa /= 10
        while mantissa < 1:
            mantissa *= 10
        assert mantissa in (1, 2, 5), (step, values)  # 1, 2 or 5 x 10^n (common practice)
        assert all((v / step).denominator == 1 for v in values), values  # whole multiples of the step


def test_text_is_escaped_for_xml():
    nasty = 'a < b & "c" \x1b[31m red\x07 \x7f \ufffe end'
    svg = envelope_svg(chart([(0, 1), (0, 2), (1, 2)], points=[("1", 0.5, 1.5, True)], name=nasty, label=nasty))
    assert "\x1b" not in svg and "\x07" not in svg and "\ufffe" not in svg
    root = parse(svg)  # well-formed XML 1.0: no forbidden character, < and & escaped (sections 2.2, 2.4)
    title = root.find(f"{NS}title").text
    # control characters (C0, DEL) and U+FFFE shown as '?'; the rest of the text kept as typed
    assert "a < b & \"c\" ?[31m red? ? ? end" in title
    texts = [t.text for t in root.iter(f"{NS}text") if t.text]
    assert any("a < b & \"c\" ?[31m red? ? ? end" in t for t in texts)


LEDGER = """steelyard = 1
[units]
mass = "kg"
length = "m"

[[item]]
id = "frame"
mass = 40.0
cg = [1.0, 0.0, 0.2]

[[item]]
id = "cargo"
mass = 30.0
cg = [1.6, 0.0, 0.0]
variable = true

[[loadout]]
name = "full"
[loadout.set]
cargo = 1.0

[[envelope]]
name = "normal"
axis = "x"
points = [[0.9, 30.0], [0.9, 80.0], [1.3, 80.0], [1.3, 30.0]]

[[envelope]]
name = "Normal!"
axis = "y"
points = [[-0.1, 30.0], [-0.1, 80.0], [0.1, 80.0], [0.1, 30.0]]
"""


def test_two_reports_in_one_folder_keep_their_own_charts(tmp_path):
    path = write_ledger(tmp_path, LEDGER, "v.toml")
    out = tmp_path / "out"
    out.mkdir()
    assert run_cli("report", path, "-o", out / "w-and-b.md", "--samples", "0")[0] == 0
    first = {p.name: p.read_bytes() for p in out.glob("*.svg")}
    # two envelopes whose names give the same file piece ("normal") still get a file each
    assert sorted(first) == ["w-and-b-envelope-normal-2.svg", "w-and-b-envelope-normal.svg"]
    assert run_cli("report", path, "-o", out / "review.md", "--samples", "0")[0] == 0
    second = {p.name: p.read_bytes() for p in out.glob("*.svg")}.keys() - first.keys()
    assert sorted(second) == ["review-envelope-normal-2.svg", "review-envelope-normal.svg"]
    for name, data in first.items():
        assert (out / name).read_bytes() == data  # the first report's charts are untouched
    text = (out / "review.md").read_text()
    assert "(review-envelope-normal.svg)" in text and "w-and-b-" not in text
    for name in [*first, *second]:
        root = ET.parse(out / name).getroot()
        assert root.tag == f"{NS}svg"
        assert not any("button" in (e.get("class") or "") for e in root.iter())  # a chart, not a window picture


def test_html_report_inlines_the_vector_charts(tmp_path):
    path = write_ledger(tmp_path, LEDGER, "v.toml")
    out = tmp_path / "r.html"
    assert run_cli("report", path, "-o", out, "--samples", "0")[0] == 0
    page = out.read_text()
    assert page.count("<svg") == 2 and not list(tmp_path.glob("*.svg"))
    start = page.index("<svg")
    root = ET.fromstring(page[start:page.index("</svg>", start) + len("</svg>")])
    assert any(e.get("class") == "envelope" for e in root.iter(f"{NS}polygon"))
