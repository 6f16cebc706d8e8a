"""CG envelope geometry checked against shapely 2 (an outside reference library).

Oracle: shapely `Polygon.covers` (boundary included) for inside, the
intersection of the polygon with a horizontal (vertical) LineString for the
chord pieces at a mass (at a CG), and `Polygon.is_valid` for polygon validity.
The only code of ours in the oracle is the rule for picking a piece, which
docs/envelopes.md defines: the piece holding the point, else the nearest
(lower on a tie).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import shapely
from hypothesis import given, settings
from hypothesis import strategies as st
from shapely.geometry import LineString, Point, Polygon

from steelyard.core.limits.envelope import (
    REL_TOL,
    EnvelopeGeometry,
    envelope_problem,
    evaluate,
    evaluate_one,
)
from steelyard.core.errors import SteelyardError

# ----------------------------------------------------------------------------- envelopes
# Invented shapes. Realistic SI ones (cg m, mass kg) and small-integer ones on
# which edge and vertex points are exact binary numbers, so shapely's exact
# predicates and ours see the very same boundary points.

DESIGN_EXAMPLE = [(2.70, 300.0), (2.70, 520.0), (2.95, 650.0), (3.20, 650.0), (3.20, 300.0)]
NOTCHED_SI = [(2.70, 300.0), (2.70, 650.0), (2.90, 650.0), (2.95, 480.0), (3.02, 650.0),
              (3.20, 650.0), (3.25, 420.0), (3.05, 300.0)]
# V notch from the top; its bottom vertex (2, 12) is a reflex vertex.
NOTCH = [(0, 10), (4, 10), (4, 14), (3, 14), (2, 12), (1, 14), (0, 14)]
# Two blocks joined along y = 11: upper [0, 1.5]x[11, 12], lower [1, 2]x[10, 11].
STEP = [(1, 10), (2, 10), (2, 11), (1.5, 11), (1.5, 12), (0, 12), (0, 11), (1, 11)]
# Comb: base [0, 5]x[10, 11] with three teeth up to 14 (horizontal edges at 11).
COMB = [(0, 10), (5, 10), (5, 14), (4, 14), (4, 11), (3, 11), (3, 14), (2, 14), (2, 11),
        (1, 11), (1, 14), (0, 14)]
DIAMOND = [(0, 11), (1, 10), (2, 11), (1, 12)]
# Concave with slanted edges, an arrow head pointing up; listed clockwise.
ARROW = [(0, 10), (1, 13), (2, 10), (1, 11)]
TRIANGLE = [(0, 10), (4, 10), (1, 13)]

CONVEX = {"design": DESIGN_EXAMPLE, "diamond": DIAMOND, "triangle": TRIANGLE}
CONCAVE = {"notched": NOTCHED_SI, "notch": NOTCH, "step": STEP, "comb": COMB, "arrow": ARROW}
ALL = {**CONVEX, **CONCAVE}
INTEGER = {k: v for k, v in ALL.items() if k not in ("design", "notched")}


# ----------------------------------------------------------------------------- shapely oracle


def _flat(geom):
    if geom.is_empty:
        return []
    if hasattr(geom, "geoms"):
        return [g for part in geom.geoms for g in _flat(part)]
    return [geom]


def _merged(intervals):
    out = []
    for lo, hi in sorted(intervals):
        if out and lo <= out[-1][1]:
            out[-1][1] = max(out[-1][1], hi)
        else:
            out.append([lo, hi])
    return [tuple(i) for i in out]


def shapely_pieces(poly: Polygon, level: float, vertical: bool = False):
    """Pieces of the polygon on the line mass = level (or cg = level), from shapely."""
    x0, y0, x1, y1 = poly.bounds
    if vertical:
        line = LineString([(level, y0 - (y1 - y0)), (level, y1 + (y1 - y0))])
        k = 1
    else:
        line = LineString([(x0 - (x1 - x0), level), (x1 + (x1 - x0), level)])
        k = 0
    parts = _flat(poly.intersection(line))
    return _merged((p.bounds[k], p.bounds[k + 2]) for p in parts)


def pick(pieces, v):
    """The piece holding v, else the nearest one (lower on a tie): the documented rule."""
    if not pieces:
        return None
    return min(pieces, key=lambda p: max(p[0] - v, v - p[1], 0.0))


def oracle(points, c, m):
    poly = Polygon(points)
    inside = poly.covers(Point(c, m))
    chord = pick(shapely_pieces(poly, m), c)
    column = shapely_pieces(poly, c, vertical=True)
    below = [p for p in column if p[0] <= m]
    if inside:
        mass_margin = pick(column, m)[1] - m
    elif below and below[-1][1] < m:
        mass_margin = below[-1][1] - m
    else:
        mass_margin = math.nan
    return inside, chord, mass_margin


def spans(points):
    p = np.asarray(points, float)
    return np.ptp(p[:, 0]), np.ptp(p[:, 1])


def check_against_shapely(points, cg, mass):
    """Every field of evaluate() against the shapely oracle, state by state."""
    s = evaluate(points, cg, mass)
    sx, sy = spans(points)
    tol_x, tol_y = 1e-9 * sx, 1e-9 * sy
    poly = Polygon(points)
    for i, (c, m) in enumerate(zip(cg, mass)):
        inside, chord, mm = oracle(points, c, m)
        assert bool(s.inside[i]) == inside, (i, c, m)
        if chord is None:
            assert np.isnan(s.lo[i]) and np.isnan(s.hi[i]) and np.isnan(s.margin[i]), (i, c, m)
        else:
            pieces = shapely_pieces(poly, m)
            d = sorted(max(p[0] - c, c - p[1], 0.0) for p in pieces)
            tie = len(d) > 1 and d[1] - d[0] < tol_x
            if not tie:
                assert s.lo[i] == pytest.approx(chord[0], abs=tol_x), (i, c, m)
                assert s.hi[i] == pytest.approx(chord[1], abs=tol_x), (i, c, m)
                assert s.margin_lo[i] == pytest.approx(c - chord[0], abs=tol_x)
                assert s.margin_hi[i] == pytest.approx(chord[1] - c, abs=tol_x)
            expect = min(c - chord[0], chord[1] - c)
            if inside:
                expect = max(expect, 0.0)
            assert s.margin[i] == pytest.approx(expect, abs=tol_x), (i, c, m)
            assert (s.margin[i] >= 0) == inside
        if math.isnan(mm):
            assert np.isnan(s.mass_margin[i]), (i, c, m, s.mass_margin[i])
        else:
            assert s.mass_margin[i] == pytest.approx(mm, abs=tol_y), (i, c, m)
    return s


def boundary_points(points):
    """Vertices and edge midpoints (exact binary numbers for the integer shapes)."""
    p = np.asarray(points, float)
    mids = 0.5 * (p + np.roll(p, -1, axis=0))
    quarter = 0.75 * p + 0.25 * np.roll(p, -1, axis=0)
    return np.concatenate([p, mids, quarter])


# ----------------------------------------------------------------------------- validity


def test_design_example_and_variants_are_valid():
    # shapely is_valid is the reference for "simple polygon"
    for pts in ALL.values():
        assert Polygon(pts).is_valid
        assert envelope_problem(pts) is None
    closed = DESIGN_EXAMPLE + [DESIGN_EXAMPLE[0]]
    assert envelope_problem(closed) is None
    assert envelope_problem(DESIGN_EXAMPLE[::-1]) is None


@pytest.mark.parametrize(
    "points, words",
    [
        ([(2.7, 300.0), (3.2, 650.0)], "at least 3"),
        ([(2.7, 300.0), (3.2, 650.0), (2.7, 300.0)], "at least 3"),  # closed 2-gon
        ([(2.7, 300.0), (2.7, -520.0), (3.2, 650.0)], "mass"),
        ([(2.7, 300.0), (2.7, 0.0), (3.2, 650.0)], "mass"),
        ([(2.7, 300.0), (math.nan, 520.0), (3.2, 650.0)], "finite"),
        ([(2.7, 300.0), (2.9, math.inf), (3.2, 650.0)], "finite"),
        ([(2.7, 300.0), (2.8, 400.0), (2.9, 500.0)], "area"),
        ([(2.7, 300.0), (2.7, 300.0), (3.2, 650.0), (3.2, 300.0)], "zero-length"),
    ],
)
def test_envelope_problem_rejects(points, words):
    # rules of a simple polygon with positive masses (docs/envelopes.md); reasons are ours
    problem = envelope_problem(points)
    assert problem is not None and words in problem


@pytest.mark.parametrize(
    "points",
    [
        [(0, 1), (1, 2), (1, 1), (0, 2)],  # symmetric bow-tie (zero signed area)
        [(0, 1), (3, 2), (3, 1), (0, 4)],  # lopsided bow-tie
        [(0, 1), (2, 1), (2, 3), (1, 1), (0, 3)],  # a vertex touching a non-adjacent edge
        [(0, 1), (2, 1), (2, 3), (2, 2), (0, 3)],  # neighbouring edges folding back
        [(0, 1), (4, 1), (4, 3), (2, 3), (2, 0.5), (1, 3)],  # edge cut through the base
    ],
)
def test_self_crossing_outlines_are_rejected_like_shapely(points):
    # shapely 2 is_valid / is_valid_reason: these rings self-intersect
    assert not Polygon(points).is_valid, shapely.is_valid_reason(Polygon(points))
    problem = envelope_problem(points)
    assert problem is not None and ("crosses or touches" in problem or "fold" in problem)


@settings(max_examples=300, deadline=None)
@given(st.lists(st.tuples(st.integers(0, 4), st.integers(1, 5)), min_size=3, max_size=7))
def test_validity_matches_shapely_on_random_grid_polygons(pts):
    # shapely is_valid as the reference; shapely accepts repeated consecutive points,
    # which we reject as zero-length edges, so those are compared separately
    ring = pts[:-1] if pts[0] == pts[-1] else pts
    repeated = any(ring[i] == ring[(i + 1) % len(ring)] for i in range(len(ring)))
    problem = envelope_problem(pts)
    if repeated:
        assert problem is not None
    elif len(ring) < 3:
        assert problem is not None
    else:
        assert (problem is None) == Polygon(ring).is_valid, (pts, problem)


def test_evaluate_raises_steelyard_error_for_bad_polygon_and_shapes():
    # a bad envelope or mismatched arrays is user input: SteelyardError, one line (rules)
    with pytest.raises(SteelyardError, match="points"):
        evaluate([(0, 1), (1, 2), (1, 1), (0, 2)], [0.5], [1.5])
    with pytest.raises(SteelyardError):
        evaluate(DESIGN_EXAMPLE, [2.8, 2.9], [400.0])
    with pytest.raises(SteelyardError):
        evaluate(DESIGN_EXAMPLE, ["aft"], [400.0])
    with pytest.raises(SteelyardError, match="pairs"):
        evaluate([1.0, 2.0, 3.0], [2.8], [400.0])


# ----------------------------------------------------------------------------- exact cases


@pytest.mark.parametrize("name", sorted(ALL))
def test_vertices_and_edge_points_are_inside(name):
    # shapely covers(): the boundary belongs to the polygon
    pts = ALL[name]
    b = boundary_points(pts)
    if name in INTEGER:  # exact binary boundary points: shapely's exact predicate agrees
        s = check_against_shapely(pts, b[:, 0], b[:, 1])
    else:  # decimal vertices: vertices are exact, edge points only to rounding
        check_against_shapely(pts, b[: len(pts), 0], b[: len(pts), 1])
        s = evaluate(pts, b[:, 0], b[:, 1])
        assert (shapely.distance(Polygon(pts), shapely.points(b)) <= 1e-12 * spans(pts)[0]).all()
    assert s.inside.all()


def test_line_through_vertices_counts_each_once():
    # shapely intersection with the line y = 11 through the diamond's side vertices
    assert evaluate_one(DIAMOND, 1.0, 11.0)["limits"] == pytest.approx(shapely_pieces(Polygon(DIAMOND), 11.0)[0])
    assert evaluate_one(DIAMOND, 1.0, 11.0)["limits"] == (0.0, 2.0)
    # top and bottom vertices: a chord of zero length (shapely returns a Point)
    assert evaluate_one(DIAMOND, 1.0, 12.0)["limits"] == (1.0, 1.0)
    assert evaluate_one(DIAMOND, 1.0, 10.0)["limits"] == (1.0, 1.0)
    # the notch's reflex vertex: the line y = 12 is one piece [0, 4] (shapely)
    assert shapely_pieces(Polygon(NOTCH), 12.0) == [(0.0, 4.0)]
    assert evaluate_one(NOTCH, 2.0, 12.0)["limits"] == (0.0, 4.0)


def test_horizontal_edges_are_inside_and_join_pieces():
    # shapely: the comb's slice along its horizontal edges at y = 11 is one piece [0, 5]
    assert shapely_pieces(Polygon(COMB), 11.0) == [(0.0, 5.0)]
    for c in (0.0, 1.5, 2.0, 3.5, 5.0):
        r = evaluate_one(COMB, c, 11.0)
        assert r["inside"] and r["limits"] == (0.0, 5.0)
    # the step shape: y = 11 holds the upper block's bottom, the overlap and the lower
    # block's top: shapely gives [0, 2] although neither slice above nor below does
    assert shapely_pieces(Polygon(STEP), 11.0) == [(0.0, 2.0)]
    assert evaluate_one(STEP, 0.25, 11.0)["limits"] == (0.0, 2.0)
    # the top edge of the design example, and points just above it (shapely covers False)
    r = evaluate_one(DESIGN_EXAMPLE, 3.0, 650.0)
    assert r["inside"] and r["limits"] == (2.95, 3.2) and r["mass_margin"] == 0.0
    assert not Polygon(DESIGN_EXAMPLE).covers(Point(3.0, 650.001))
    assert evaluate_one(DESIGN_EXAMPLE, 3.0, 650.001)["limits"] is None


def test_concave_rule_piece_holding_cg_else_nearest():
    # comb at y = 12: shapely gives three pieces [0,1], [2,3], [4,5]
    assert shapely_pieces(Polygon(COMB), 12.0) == [(0.0, 1.0), (2.0, 3.0), (4.0, 5.0)]
    assert evaluate_one(COMB, 2.5, 12.0)["limits"] == (2.0, 3.0)  # holds the CG
    r = evaluate_one(COMB, 3.75, 12.0)  # nearest: [4, 5] at 0.25
    assert r["limits"] == (4.0, 5.0) and r["margin"] == pytest.approx(-0.25)
    r = evaluate_one(COMB, 1.5, 12.0)  # a tie: the lower piece (documented rule)
    assert r["limits"] == (0.0, 1.0) and r["margin"] == pytest.approx(-0.5) and not r["inside"]


def test_mass_margin_definition():
    # vertical chords from shapely: design example at cg 2.8 m spans 300 .. 520 + 0.1/0.25*130
    top = shapely_pieces(Polygon(DESIGN_EXAMPLE), 2.8, vertical=True)[0][1]
    assert top == pytest.approx(520.0 + 0.1 / 0.25 * 130.0)
    assert evaluate_one(DESIGN_EXAMPLE, 2.8, 500.0)["mass_margin"] == pytest.approx(top - 500.0)
    # above the envelope at its CG: minus the excess
    assert evaluate_one(DESIGN_EXAMPLE, 2.8, 600.0)["mass_margin"] == pytest.approx(top - 600.0)
    # below the minimum mass, or CG outside the CG span: undefined
    assert evaluate_one(DESIGN_EXAMPLE, 2.8, 250.0)["mass_margin"] is None
    assert evaluate_one(DESIGN_EXAMPLE, 2.5, 400.0)["mass_margin"] is None
    # comb tooth: from inside the base under a tooth the line leaves at y = 14 (shapely)
    assert shapely_pieces(Polygon(COMB), 0.5, vertical=True) == [(10.0, 14.0)]
    assert evaluate_one(COMB, 0.5, 10.5)["mass_margin"] == pytest.approx(3.5)
    # between teeth the column is [10, 11]
    assert evaluate_one(COMB, 1.5, 10.5)["mass_margin"] == pytest.approx(0.5)


def test_mass_outside_range_gives_no_limits():
    # contract: limits_m null outside the envelope's mass range
    s = evaluate(DESIGN_EXAMPLE, [3.0, 3.0], [299.0, 651.0])
    assert not s.inside.any() and np.isnan(s.lo).all() and np.isnan(s.margin).all()
    r = evaluate_one(DESIGN_EXAMPLE, 3.0, 700.0)
    assert r["limits"] is None and r["margin"] is None and r["mass_margin"] == pytest.approx(-50.0)


def test_non_finite_states_are_outside():
    # a state with no number is not inside anything (common practice: fail safe)
    s = evaluate(DESIGN_EXAMPLE, [math.nan, 3.0], [400.0, math.nan])
    assert not s.inside.any() and np.isnan(s.margin).all()


def test_rounding_tolerance_is_relative_to_span():
    # shapely distance shows the points are outside by 1e-12 and 1e-6 of the CG span;
    # docs/envelopes.md: within REL_TOL (1e-9) of the span counts as on the boundary
    sx, _ = spans(DESIGN_EXAMPLE)
    poly = Polygon(DESIGN_EXAMPLE)
    near, far = 3.2 + 1e-12 * sx, 3.2 + 1e-6 * sx
    assert not poly.covers(Point(near, 400.0)) and poly.distance(Point(near, 400.0)) < REL_TOL * sx
    assert evaluate_one(DESIGN_EXAMPLE, near, 400.0)["inside"]
    assert evaluate_one(DESIGN_EXAMPLE, near, 400.0)["margin"] == 0.0
    assert not evaluate_one(DESIGN_EXAMPLE, far, 400.0)["inside"]
    # a loading in lb and in that lands on the aft limit of an envelope given in lb / in
    lb, inch = 0.45359237, 0.0254
    env = [(80.0 * inch, 1400 * lb), (80.0 * inch, 2300 * lb), (93.0 * inch, 2300 * lb), (93.0 * inch, 1400 * lb)]
    moment = (1700 * 85.0 + 300 * 117.0) * lb * inch  # CG exactly 93.0 in at 2,000 lb
    assert evaluate_one(env, moment / (2000 * lb), 2000 * lb)["inside"]


def test_masses_within_tolerance_of_a_vertex_level_use_that_level():
    # shapely distance: these states lie within 1e-9 of the span from the boundary, outside it;
    # docs/envelopes.md: such a mass is evaluated at the vertex's mass
    poly = Polygon(DESIGN_EXAMPLE)
    m = 650.0 + 1e-10
    assert not poly.covers(Point(3.0, m)) and poly.distance(Point(3.0, m)) < 1e-9 * 350
    r = evaluate_one(DESIGN_EXAMPLE, 3.0, m)
    assert r["inside"] and r["limits"] == (2.95, 3.2)
    # just above the notch's bottom vertex: evaluated on the vertex, so one piece, inside
    r = evaluate_one(NOTCH, 2.0, 12.0 + 1e-12)
    assert not Polygon(NOTCH).covers(Point(2.0, 12.0 + 1e-12))
    assert r["inside"] and r["limits"] == (0.0, 4.0)


def test_evaluate_one_keys():
    # rollup --json contract (DESIGN.md): inside, limits, margin; plus mass_margin
    r = evaluate_one(DESIGN_EXAMPLE, 2.8, 400.0)
    assert set(r) == {"inside", "limits", "margin", "mass_margin"}
    assert r["inside"] is True and r["limits"] == (2.7, 3.2)
    assert r["margin"] == pytest.approx(0.1)


def test_prepared_geometry_gives_same_results():
    # the same numbers whether the polygon is given as points or prepared once (shapely oracle)
    g = EnvelopeGeometry.from_points(NOTCHED_SI)
    rng = np.random.default_rng(7)
    c, m = rng.uniform(2.6, 3.3, 200), rng.uniform(280, 670, 200)
    a, b = g.evaluate(c, m), evaluate(NOTCHED_SI, c, m)
    np.testing.assert_array_equal(a.inside, b.inside)
    np.testing.assert_array_equal(a.lo, b.lo)
    assert a.inside.tolist() == shapely.covers(Polygon(NOTCHED_SI), shapely.points(c, m)).tolist()


# ----------------------------------------------------------------------------- random states


@pytest.mark.parametrize("name", sorted(ALL))
def test_random_states_match_shapely(name):
    # shapely covers / intersection per state; seeded numpy states around the envelope,
    # a third of them at vertex masses or vertex CGs (where rules are easiest to get wrong)
    pts = np.asarray(ALL[name], float)
    rng = np.random.default_rng(11 + sorted(ALL).index(name))
    (x0, y0), (x1, y1) = pts.min(0), pts.max(0)
    n = 300
    c = rng.uniform(x0 - 0.1 * (x1 - x0), x1 + 0.1 * (x1 - x0), n)
    m = rng.uniform(y0 - 0.1 * (y1 - y0), y1 + 0.1 * (y1 - y0), n)
    m[: n // 6] = rng.choice(pts[:, 1], n // 6)
    c[n // 6: n // 3] = rng.choice(pts[:, 0], n // 3 - n // 6)
    check_against_shapely(ALL[name], c, m)


@settings(max_examples=200, deadline=None)
@given(name=st.sampled_from(sorted(INTEGER)), i=st.integers(-4, 24), j=st.integers(36, 60))
def test_quarter_grid_states_match_shapely(name, i, j):
    # hypothesis over a quarter-unit grid: many states fall exactly on edges and vertices
    check_against_shapely(INTEGER[name], [i / 4.0], [j / 4.0])


def test_ten_thousand_states_vectorised_equal_per_point_shapely():
    # one vectorised evaluate over 10,000 states vs shapely, state by state
    pts = NOTCHED_SI
    rng = np.random.default_rng(20240611)
    n = 10_000
    c = rng.uniform(2.6, 3.35, n)
    m = rng.uniform(280.0, 670.0, n)
    m[:500] = rng.choice(np.asarray(pts)[:, 1], 500)
    s = evaluate(pts, c, m)
    poly = Polygon(pts)
    covers = shapely.covers(poly, shapely.points(c, m))
    assert s.inside.tolist() == covers.tolist()
    lines = shapely.linestrings(np.stack([np.stack([np.full(n, 2.0), m], 1),
                                          np.stack([np.full(n, 4.0), m], 1)], 1))
    cuts = shapely.intersection(poly, lines)
    tol = 1e-9 * spans(pts)[0]
    for i in range(n):
        chord = pick(_merged((p.bounds[0], p.bounds[2]) for p in _flat(cuts[i])), c[i])
        if chord is None:
            assert np.isnan(s.lo[i])
            continue
        assert abs(s.lo[i] - chord[0]) <= tol and abs(s.hi[i] - chord[1]) <= tol, i
        assert abs(s.margin[i] - (min(c[i] - chord[0], chord[1] - c[i]))) <= tol, i
    assert s.inside.sum() > 1000 and (~s.inside).sum() > 1000  # both kinds well represented
