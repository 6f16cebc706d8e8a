"""EnvelopeChart, headless: legend words, marks where they belong, small and broken input.

Where a test needs to know whether a point is inside an envelope, the answer
comes from shapely (`Polygon.covers`, boundary included), not from the chart.
"""

from __future__ import annotations

from contextlib import asynccontextmanager

import numpy as np
import pytest
from shapely.geometry import Point, Polygon
from textual.app import App, ComposeResult
from textual.geometry import Region

from steelyard.tui.widgets.chart import NO_DATA, OTHER, POINT, REGION, TOO_WIDE, WORST, EnvelopeChart

# an invented envelope, [cg mm, mass kg]
ENVELOPE = np.array([[2700.0, 300.0], [2700.0, 520.0], [2950.0, 650.0], [3200.0, 650.0], [3200.0, 300.0]])
RECT = np.array([[100.0, 300.0], [100.0, 600.0], [200.0, 600.0], [200.0, 300.0]])
TRIANGLE = np.array([[100.0, 300.0], [200.0, 300.0], [100.0, 600.0]])
BRAILLE = range(0x2801, 0x2900)  # any braille pattern with at least one dot


class Host(App):
    CSS = "EnvelopeChart { height: 1fr; }"

    def compose(self) -> ComposeResult:
        yield EnvelopeChart()


@asynccontextmanager
async def hosted_chart(size: tuple[int, int]):
    """An EnvelopeChart filling a headless terminal of `size`: (chart, pilot)."""
    async with Host().run_test(size=size) as pilot:
        yield pilot.app.query_one(EnvelopeChart), pilot


def screen_lines(chart: EnvelopeChart) -> list[str]:
    """What the widget paints, through Textual's own style pipeline."""
    w, h = chart.size
    return [s.text for s in chart.render_lines(Region(0, 0, w, h))]


def find(lines: list[str], glyph: str) -> list[tuple[int, int]]:
    return [(r, c) for r, line in enumerate(lines) for c, ch in enumerate(line) if ch == glyph]


def is_dot(ch: str) -> bool:
    return ord(ch) in BRAILLE


def full_data(chart: EnvelopeChart, path_points: int = 500) -> np.ndarray:
    t = np.linspace(0.0, 1.0, path_points)
    path = np.column_stack([3050 - 150 * t, 600 - 180 * t])
    chart.set_data(ENVELOPE, (3000.0, 560.0), [("ferry", 2800.0, 400.0), ("max-range", 3150.0, 620.0)],
                   path, path_points * 7 // 10, "CG station (mm)", "mass (kg)")
    return path


async def full_chart_lines(size: tuple[int, int], path_points: int = 500) -> list[str]:
    """What the chart paints in a terminal of `size` with `full_data` on it."""
    async with hosted_chart(size) as (chart, pilot):
        full_data(chart, path_points)
        await pilot.pause()
        return screen_lines(chart)


async def test_legend_words_and_distinct_marks_on_screen():
    lines = await full_chart_lines((100, 30))
    text = "\n".join(lines)
    for words in ("envelope", "path", "this loadout", "other loadouts", "least margin",
                  "ferry", "max-range"):
        assert words in text
    # each mark is its own glyph: one current point, two others, one worst step,
    # plus one sample of each in the legend
    assert len(find(lines, POINT)) == 2
    assert len(find(lines, OTHER)) == 3
    assert len(find(lines, WORST)) == 2
    assert len({POINT, OTHER, WORST}) == 3


async def test_axis_ticks_and_labels_with_units():
    text = "\n".join(await full_chart_lines((100, 30)))
    assert "CG station (mm)" in text and "mass (kg)" in text
    # round ticks across 2700..3200 mm and 300..650 kg (steps of 1, 2 or 5 x 10^k: common practice)
    assert "3000" in text and "2800" in text
    assert "400" in text and "600" in text


def _marker_boxed(lines: list[str], r: int, c: int) -> bool:
    """Drawn edge dots on all four sides of cell (r, c): left, right, above, below."""
    row = lines[r]
    col = [line[c] if c < len(line) else " " for line in lines]
    return (any(is_dot(ch) for ch in row[:c]) and any(is_dot(ch) for ch in row[c + 1:])
            and any(is_dot(ch) for ch in col[:r]) and any(is_dot(ch) for ch in col[r + 1:]))


@pytest.mark.parametrize("size", [(80, 24), (36, 12), (120, 40)])
@pytest.mark.parametrize("polygon, inside", [(RECT, (150.0, 450.0)), (TRIANGLE, (115.0, 400.0))])
async def test_point_inside_is_drawn_inside_the_polygon(size, polygon, inside):
    assert Polygon(polygon).covers(Point(inside))  # shapely: the reference for "inside"
    async with hosted_chart(size) as (chart, pilot):
        chart.set_data(polygon, inside, [], None, None, "CG (mm)", "mass (kg)")
        await pilot.pause()
        lines = screen_lines(chart)
        marks = [(r, c) for r, c in find(lines, POINT) if r < len(lines) - 1]  # not the legend row
        assert len(marks) == 1
        assert _marker_boxed(lines, *marks[0])


@pytest.mark.parametrize("polygon, outside", [(RECT, (260.0, 450.0)), (TRIANGLE, (180.0, 520.0))])
async def test_point_outside_is_drawn_outside_the_polygon(polygon, outside):
    assert not Polygon(polygon).covers(Point(outside))  # shapely
    async with hosted_chart((80, 24)) as (chart, pilot):
        chart.set_data(polygon, outside, [], None, None, "CG (mm)", "mass (kg)")
        await pilot.pause()
        lines = screen_lines(chart)
        marks = [(r, c) for r, c in find(lines, POINT) if r < len(lines) - 1]
        assert len(marks) == 1
        r, c = marks[0]
        assert not any(is_dot(ch) for ch in lines[r][c + 1:])  # nothing to its right: it is beyond the edge
        assert not _marker_boxed(lines, r, c)


async def test_worst_step_marks_the_given_path_state():
    async with hosted_chart((80, 24)) as (chart, pilot):
        path = np.array([[120.0, 350.0], [150.0, 450.0], [180.0, 550.0]])
        chart.set_data(RECT, None, [], path, 0, "CG (mm)", "mass (kg)")
        await pilot.pause()
        low = find(screen_lines(chart), WORST)[0]
        chart.set_data(RECT, None, [], path, 2, "CG (mm)", "mass (kg)")
        await pilot.pause()
        high = find(screen_lines(chart), WORST)[0]
        # state 2 is heavier (drawn higher) and further aft (drawn further right) than state 0
        assert high[0] < low[0] and high[1] > low[1]


@pytest.mark.parametrize("size", [(36, 12), (24, 8), (12, 4), (6, 2), (1, 1), (2, 30), (200, 3)])
async def test_small_sizes_do_not_crash(size):
    lines = await full_chart_lines(size, 10_000)
    assert all(len(line) <= max(size[0], 1) for line in lines)


async def test_36_by_12_still_shows_chart_and_legend():
    text = "\n".join(await full_chart_lines((36, 12)))
    for words in ("envelope", "path", "loadout", "other loadouts", "least margin"):
        assert words in text
    assert any(is_dot(ch) for ch in text)


@pytest.mark.parametrize("polygon", [
    np.array([[3000.0, 500.0]] * 4),                                # all one point
    np.array([[2700.0, 300.0], [2800.0, 400.0], [2900.0, 500.0]]),  # collinear
    np.array([[2700.0, 300.0]]),                                     # one vertex
    np.array([[2700.0, 300.0], [3200.0, 300.0]]),                    # one edge
    np.array([[np.nan, 300.0], [3200.0, np.inf], [2900.0, 500.0]]),  # non-finite values
    np.zeros((0, 2)),
])
async def test_degenerate_polygons_do_not_crash(polygon):
    async with hosted_chart((60, 20)) as (chart, pilot):
        chart.set_data(polygon, (2900.0, 450.0), [], None, None, "CG (mm)", "mass (kg)")
        await pilot.pause()
        assert POINT in "\n".join(screen_lines(chart))


async def test_values_beyond_float_range_show_a_message():
    async with hosted_chart((60, 20)) as (chart, pilot):
        chart.set_data(np.array([[-1e308, 1.0], [1e308, 2.0], [0.0, 3.0]]), (0.0, 2.0), [], None, None, "x", "m")
        await pilot.pause()
        assert TOO_WIDE in "\n".join(screen_lines(chart))


async def test_no_data_shows_a_plain_message():
    async with hosted_chart((60, 20)) as (chart, pilot):
        await pilot.pause()
        assert NO_DATA in "\n".join(screen_lines(chart))
        full_data(chart)
        await pilot.pause()
        assert NO_DATA not in "\n".join(screen_lines(chart))
        chart.set_data(None, None, [], None, None, "CG (mm)", "mass (kg)")
        await pilot.pause()
        assert NO_DATA in "\n".join(screen_lines(chart))


async def test_redraws_on_resize():
    async with hosted_chart((80, 24)) as (chart, pilot):
        full_data(chart)
        await pilot.pause()
        before = screen_lines(chart)
        await pilot.resize_terminal(50, 16)
        await pilot.pause()
        after = screen_lines(chart)
        assert chart.size.width == 50
        assert len(after) == 16 and all(len(line) == 50 for line in after)
        assert after != [line[:50] for line in before[:16]]
        assert "least margin" in "\n".join(after)


async def test_labels_and_names_are_literal():
    async with hosted_chart((100, 24)) as (chart, pilot):
        chart.set_data(RECT, (150.0, 450.0), [("[b]x[/b]", 120.0, 400.0)], None, None,
                       "[i]CG[/i] (mm)\x1b[2J", "mass (kg)")
        await pilot.pause()
        text = "\n".join(screen_lines(chart))
        assert "[i]CG[/i] (mm)" in text and "[b]x[/b]" in text
        assert "\x1b" not in text


async def test_region_shades_the_cells_it_covers_and_is_named():
    # a circle of radius 20 mm about (150, 450) inside RECT: its shaded cells must all lie inside the
    # circle's bounding box, and the cells around the centre must be shaded (shapely decides "inside")
    t = np.linspace(0.0, 2.0 * np.pi, 72)
    circle = np.column_stack([150.0 + 20.0 * np.cos(t), 450.0 + 60.0 * np.sin(t)])
    async with hosted_chart((80, 24)) as (chart, pilot):
        chart.set_data(RECT, (150.0, 450.0), [], None, None, "CG (mm)", "mass (kg)", region=circle,
                       region_label="2σ CG region")
        await pilot.pause()
        lines = screen_lines(chart)
        text = "\n".join(lines)
        assert f"{REGION} 2σ CG region" in text  # named in the legend with its own glyph
        shaded = find(lines, REGION)
        assert len(shaded) > 4  # the ellipse covers several cells at this size, plus the legend sample
        point = find(lines, POINT)[0]
        # the point sits inside the region: shaded cells on both sides of it on its row
        row = [c for r, c in shaded if r == point[0]]
        assert min(row) < point[1] < max(row)
        assert REGION not in lines[0]  # nothing outside the plot (the top label row)


async def test_region_smaller_than_a_cell_still_shows():
    tiny = np.array([[150.0, 450.0], [150.01, 450.0], [150.01, 450.01], [150.0, 450.01]])
    async with hosted_chart((80, 24)) as (chart, pilot):
        chart.set_data(RECT, None, [], None, None, "CG (mm)", "mass (kg)", region=tiny)
        await pilot.pause()
        lines = screen_lines(chart)
        # one cell in the plot, one in the legend
        assert len(find(lines, REGION)) == 2
        chart.set_data(RECT, None, [], None, None, "CG (mm)", "mass (kg)", region=np.array([[np.nan, np.nan]]))
        await pilot.pause()
        assert not find(screen_lines(chart), REGION)  # nothing drawable: no region, no legend entry
