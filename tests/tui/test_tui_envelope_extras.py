"""The envelopes view's extras: a sequence's path and least-margin state, the CG
uncertainty region, and %MAC in the totals.

Oracles: shapely (the envelope's chord at each mass, for the margins along the
path), the first-order law of propagation of uncertainty (JCGM 100, the GUM)
written out by hand for two items, %MAC = (CG − LEMAC) / MAC × 100
(FAA-H-8083-1), and exact fractions for the CG (CG = Σ moment / Σ mass).
"""

from __future__ import annotations

import math
import tomllib
from fractions import Fraction

import numpy as np
from shapely.geometry import LineString, Polygon

from steelyard.core.display import fmt
from support.sigfig import length_text, sig_text
from steelyard.tui.widgets.chart import REGION, WORST, EnvelopeChart
from support.exact import exact_totals
from support.ledgers import write_ledger
from support.paths import FIXTURES
from support.tui import copy_fixture, editor, screen_text, settle

OVERWEIGHT = FIXTURES / "trainer-overweight.toml"
INCH = 0.0254  # m (NIST SP 811)
LB = 0.45359237  # kg (NIST SP 811)

TOLERANCES = """steelyard = 1
[units]
mass = "lb"
length = "in"

[[item]]
id = "airframe"
mass = 900.0
cg = [120.0, 0.0, 20.0]
tolerance = { mass = 20.0, cg = [1.0, 0.5, 0.5], kind = "sigma" }

[[item]]
id = "engine"
mass = 300.0
cg = [80.0, 0.0, 25.0]
tolerance = { mass = 6.0, cg = 0.6, kind = "bound" }

[[envelope]]
name = "normal"
axis = "x"
points = [[100.0, 900.0], [100.0, 1400.0], [125.0, 1400.0], [125.0, 900.0]]
"""


async def _envelopes(app, pilot) -> None:
    await pilot.press("3")
    for _ in range(100):
        await settle(pilot, app, rounds=1)
        if app.session.chart_extras() is not None and app.session.chart_extras().ledger is app.session.ledger:
            break
    await pilot.pause(0.2)


async def test_sequence_path_and_its_least_margin_state_are_charted(tmp_path):
    path = copy_fixture(tmp_path, OVERWEIGHT)
    async with editor(path) as (app, pilot):
        app.session.set_loadout("aft-loaded")
        app.refresh_views()
        await _envelopes(app, pilot)
        text = " ".join(screen_text(app).split())
        assert "Sequence forward-tank-first" in text and "least margin at step" in text
        chart = app.main.query_one(EnvelopeChart)
        data = chart._data
        assert data["path"] is not None and WORST in chart.picture_text()
        # independent: the margin of every path state from the file's polygon (shapely chords)
        env = tomllib.loads(OVERWEIGHT.read_text())["envelope"][0]
        poly = Polygon(env["points"])  # [station in, mass lb]
        cg, mass = data["path"][:, 0], data["path"][:, 1]  # shown in the file's units
        margins = []
        for c, m in zip(cg, mass):
            chord = poly.intersection(LineString([(0, m), (1000, m)]))
            lo, hi = chord.bounds[0], chord.bounds[2]
            margins.append(min(c - lo, hi - c))
        margins = np.array(margins)
        worst = data["worst"]
        assert margins[worst] <= margins.min() + 1e-9  # the marked state has the least margin
        assert margins.min() < 0  # this sequence leaves the envelope (the fixture says step 2 does)
        assert "OUTSIDE" in text and "PAST" in text
        # b cycles sequences of this loadout; with one sequence it stays on it
        await pilot.press("b")
        await pilot.pause(0.2)
        assert "Sequence forward-tank-first" in " ".join(screen_text(app).split())


async def test_uncertainty_region_is_the_two_sigma_ellipse(tmp_path):
    path = write_ledger(tmp_path, TOLERANCES, "tol.toml")
    async with editor(path) as (app, pilot):
        await _envelopes(app, pilot)
        # first order (JCGM 100): σ²(cg_x) = Σ ((x_i − cg)/M)² σ_m,i² + Σ (m_i/M)² σ_x,i²
        m = [900.0, 300.0]
        x = [120.0, 80.0]
        sm = [20.0, 6.0 / math.sqrt(3)]  # a bound is uniform: σ = bound/√3
        sx = [1.0, 0.6 / math.sqrt(3)]
        big = sum(m)
        cg = sum(a * b for a, b in zip(m, x)) / big
        var_x = sum(((xi - cg) / big) ** 2 * s ** 2 for xi, s in zip(x, sm)) + sum(
            (mi / big) ** 2 * s ** 2 for mi, s in zip(m, sx))
        sigma_m = math.sqrt(sum(s ** 2 for s in sm))
        extras = app.session.chart_extras()
        assert math.isclose(extras.sigma[1], math.sqrt(var_x) * INCH, rel_tol=1e-12)
        assert math.isclose(extras.sigma[0], sigma_m * LB, rel_tol=1e-12)
        region = app.main.query_one(EnvelopeChart)._data["region"]  # in lb and in
        # the ellipse reaches ±2σ along each of its own variables (72 samples: within 0.1 %)
        assert math.isclose(region[:, 0].max() - cg, 2 * math.sqrt(var_x), rel_tol=2e-3)
        assert math.isclose(region[:, 1].max() - big, 2 * sigma_m, rel_tol=2e-3)
        text = screen_text(app)
        assert REGION in app.main.query_one(EnvelopeChart).picture_text()
        assert "2σ CG region" in text and f"σ x {length_text(math.sqrt(var_x), 1 / Fraction('0.0254'))}" in " ".join(text.split())


async def test_totals_show_percent_mac_from_the_mac_table(tmp_path):
    path = copy_fixture(tmp_path, OVERWEIGHT)
    async with editor(path) as (app, pilot):
        await pilot.press("2")
        await pilot.pause(0.2)
        _mass, cg = exact_totals(path)  # no loadout: the fixed items
        mac = tomllib.loads(path.read_text())["mac"]
        percent = (cg[0] / Fraction("0.0254") - Fraction(str(mac["lemac"]))) / Fraction(str(mac["length"])) * 100
        text = screen_text(app)
        line = next(line for line in text.splitlines() if "%MAC" in line)
        assert fmt(float(percent), 2) in line and "LEMAC 114, MAC 60 in" in line
