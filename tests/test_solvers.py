"""Weight-and-balance solvers against the FAA handbooks' formulas and worked examples.

Sources: FAA-H-8083-1 (Aircraft Weight and Balance Handbook), FAA-H-8083-25
(Pilot's Handbook of Aeronautical Knowledge), FAA-H-8083-30 ch. 4 (AMT
General Handbook), as listed in REFERENCES.md; exact arithmetic with
fractions.Fraction; shapely 2 for the envelope solvers. Examples are worked in
lb and in, converted with the exact factors of NIST SP 811.
"""

from __future__ import annotations

import math
from fractions import Fraction as F

import numpy as np
import pytest
import shapely
from shapely.geometry import Polygon

from steelyard.core.errors import SteelyardError
from steelyard.core.limits.mac import percent_mac, station_from_percent_mac
from steelyard.core.limits.solvers import (
    add_mass,
    ballast_for_limit,
    ballast_to_enter,
    payload_remaining,
    weight_shift,
)

LB = 0.45359237  # kg, exact (NIST SP 811)
IN = 0.0254  # m, exact (NIST SP 811)


# ----------------------------------------------------------------------------- handbook examples


def test_weight_shift_handbook_example():
    # FAA-H-8083-25 weight-shift example (REFERENCES.md, derived): 7,800 lb at 81.5 in,
    # aft limit 80.5 in, cargo moved from station 150 to 30: 7800 x 1.0 / 120 = 65 lb
    expect = F(7800) * (F("80.5") - F("81.5")) / (30 - 150)
    assert expect == 65
    moved = weight_shift(7800 * LB, 81.5 * IN, 80.5 * IN, 150 * IN, 30 * IN)
    assert moved / LB == pytest.approx(float(expect), rel=1e-12)


def test_weight_shift_is_scale_free_and_exact_in_any_units():
    # the formula is a ratio of lengths times a mass: the same in lb/in as in kg/m
    assert weight_shift(7800, 81.5, 80.5, 150, 30) == pytest.approx(65.0, rel=1e-15)


def test_weight_addition_handbook_example():
    # weight added (REFERENCES.md, from memory; derivable): 6,860 lb at 80.0 in plus
    # 140 lb at station 150 gives 81.4 in; recomputed exactly as sum of moments / sum of weights
    expect = (F(6860) * 80 + F(140) * 150) / (6860 + 140)
    assert expect == F("81.4")
    new_mass, new_cg = add_mass(6860 * LB, 80.0 * IN, 140 * LB, 150 * IN)
    assert new_mass / LB == pytest.approx(7000.0, rel=1e-15)
    assert new_cg / IN == pytest.approx(float(expect), rel=1e-13)


def test_weight_removal_reverses_addition():
    # FAA-H-8083-1 weight removed: the same formula with a negative change (exact: back to 80.0 in)
    new_mass, new_cg = add_mass(7000 * LB, 81.4 * IN, -140 * LB, 150 * IN)
    assert new_mass / LB == pytest.approx(6860.0, rel=1e-14)
    assert new_cg / IN == pytest.approx(80.0, rel=1e-13)


def test_ballast_handbook_example():
    # ballast (REFERENCES.md, derived from the FAA-H-8083-1 formula): 4,954 lb at +30.5 in,
    # forward limit +32.0 in, ballast at +162 in: 4954 x 1.5 / 130 = 57.16 lb
    expect = F(4954) * (F("32.0") - F("30.5")) / (162 - F("32.0"))
    assert round(float(expect), 2) == 57.16
    b = ballast_for_limit(4954 * LB, 30.5 * IN, 32.0 * IN, 162 * IN)
    assert b / LB == pytest.approx(float(expect), rel=1e-12)
    # check by moments (FAA-H-8083-1 CG = total moment / total weight): CG lands on the limit
    assert (F(4954) * F("30.5") + expect * 162) / (4954 + expect) == F(32)


def test_percent_mac_formula():
    # FAA-H-8083-1: %MAC = (CG - LEMAC) / MAC x 100; invented wing, exact by fractions
    lemac, mac, cg = F("68.0"), F("58.0"), F("81.5")
    expect = (cg - lemac) / mac * 100
    assert percent_mac(81.5 * IN, 68.0 * IN, 58.0 * IN) == pytest.approx(float(expect), rel=1e-13)
    # scale-free: the same in inches as in metres
    assert percent_mac(81.5, 68.0, 58.0) == pytest.approx(float(expect), rel=1e-15)
    # derived from the definition: LEMAC is 0 %, the trailing edge 100 %, quarter chord 25 %
    x = np.array([68.0, 68.0 + 58.0, 68.0 + 58.0 / 4])
    np.testing.assert_allclose(percent_mac(x, 68.0, 58.0), [0.0, 100.0, 25.0], rtol=0, atol=1e-12)


def test_percent_mac_inverse_round_trip():
    # station = LEMAC + %MAC/100 x MAC, the same definition solved for the station
    p = np.linspace(-10.0, 60.0, 15)
    x = station_from_percent_mac(p, 1.727, 1.473)
    np.testing.assert_allclose(percent_mac(x, 1.727, 1.473), p, rtol=0, atol=1e-12)
    assert station_from_percent_mac(25.0, 68.0, 58.0) == pytest.approx(82.5, rel=1e-15)


def test_percent_mac_rejects_zero_chord():
    # a chord of zero length has no percentages (definition)
    with pytest.raises(SteelyardError, match="MAC"):
        percent_mac(1.0, 0.5, 0.0)


# ----------------------------------------------------------------------------- impossible asks


def test_ballast_at_the_limit_station_raises():
    # FAA-H-8083-1 formula divides by (ballast station - limit)
    with pytest.raises(SteelyardError, match="limit station"):
        ballast_for_limit(4954 * LB, 30.5 * IN, 32.0 * IN, 32.0 * IN)


def test_ballast_on_the_wrong_side_raises():
    # by moments: mass added at a station ahead of a forward limit can never pull the CG aft to it
    with pytest.raises(SteelyardError, match="beyond the limit"):
        ballast_for_limit(4954 * LB, 30.5 * IN, 32.0 * IN, 10.0 * IN)


def test_weight_shift_impossible_cases_raise():
    # FAA-H-8083-1 weight shift: distance moved is the divisor; a move the wrong way needs negative mass
    with pytest.raises(SteelyardError, match="cannot move"):
        weight_shift(7800, 81.5, 80.5, 150, 150)
    with pytest.raises(SteelyardError, match="other way"):
        weight_shift(7800, 81.5, 80.5, 30, 150)
    with pytest.raises(SteelyardError, match="more than"):
        weight_shift(7800, 81.5, 10.0, 150, 149)


def test_bad_numbers_raise_steelyard_errors():
    # bad input never crashes (rules): one SteelyardError, one line
    with pytest.raises(SteelyardError):
        add_mass(0.0, 1.0, 1.0, 2.0)
    with pytest.raises(SteelyardError):
        add_mass(10.0, 1.0, -10.0, 2.0)
    with pytest.raises(SteelyardError):
        add_mass(10.0, math.nan, 1.0, 2.0)
    with pytest.raises(SteelyardError):
        payload_remaining([], None, 10.0, 1.0, 2.0)
    with pytest.raises(SteelyardError):
        payload_remaining([TAKEOFF], None, 400.0, "fwd", 2.9)
    with pytest.raises(SteelyardError, match="one per envelope"):
        payload_remaining([TAKEOFF], None, 400.0, [2.9, 0.0], 2.9)
    assert payload_remaining([], 500.0, 400.0, 2.9, 3.0) == pytest.approx(100.0)  # max mass only
    err = pytest.raises(SteelyardError, ballast_for_limit, 10.0, 1.0, 2.0, 2.0).value
    assert "\n" not in str(err)


# ----------------------------------------------------------------------------- envelope solvers

# Invented envelopes in lb / in, converted exactly.
RECT = np.array([(32.0, 4000.0), (32.0, 6000.0), (40.0, 6000.0), (40.0, 4000.0)]) * [IN, LB]
NOTCHED = np.array([(2.70, 300.0), (2.70, 650.0), (2.90, 650.0), (2.95, 480.0), (3.02, 650.0),
                    (3.20, 650.0), (3.25, 420.0), (3.05, 300.0)])
TAKEOFF = np.array([(2.70, 300.0), (2.70, 520.0), (2.95, 650.0), (3.20, 650.0), (3.20, 300.0)])
LANDING = np.array([(2.75, 300.0), (2.75, 600.0), (3.15, 600.0), (3.15, 300.0)])


def path(w, x, s, b):
    """(cg, mass) after adding b at s, by moments (FAA-H-8083-1: CG = moment / weight)."""
    b = np.asarray(b, float)
    return (w * x + b * s) / (w + b), w + b


def covered(points, w, x, s, b):
    return shapely.covers(Polygon(points), shapely.points(*path(w, x, s, b)))


def near(points, w, x, s, b, tol):
    return shapely.distance(Polygon(points), shapely.points(*path(w, x, s, b))) <= tol


def test_ballast_to_enter_equals_handbook_formula_on_a_straight_limit():
    # a vertical forward edge at +32.0 in: entering it is the FAA-H-8083-1 ballast formula
    b = ballast_to_enter(RECT, 4954 * LB, 30.5 * IN, 162 * IN)
    assert b / LB == pytest.approx(4954 * 1.5 / 130, rel=1e-10)
    assert b / LB >= 4954 * 1.5 / 130 * (1 - 1e-12)  # never less than needed
    assert ballast_to_enter(RECT, 4954 * LB, 33.0 * IN, 162 * IN) == 0.0  # already inside


def test_payload_remaining_equals_weight_addition_formula_on_a_straight_limit():
    # weight added (FAA-H-8083-1) solved for the mass that puts the CG on the aft limit 40 in:
    # w = W (limit - cg) / (station - limit), exact by fractions
    expect = F(4954) * (40 - 36) / (162 - 40)
    b = payload_remaining([RECT], None, 4954 * LB, 36 * IN, 162 * IN)
    assert b / LB == pytest.approx(float(expect), rel=1e-10)
    assert b / LB <= float(expect) * (1 + 1e-12)  # never more than allowed
    # at the CG itself the CG does not move: the top edge at 6,000 lb is the limit (derived)
    assert payload_remaining([RECT], None, 4954 * LB, 36 * IN, 36 * IN) / LB == pytest.approx(1046.0)
    # a maximum mass below the envelope's top takes over (derived: 5,000 - 4,954)
    assert payload_remaining([RECT], 5000 * LB, 4954 * LB, 36 * IN, 20 * IN) / LB == pytest.approx(46.0)


@pytest.mark.parametrize(
    "w, x, s",
    [
        (350.0, 2.60, 3.60),   # forward of the envelope, ballast in the tail
        (320.0, 3.40, 2.20),   # aft of it, ballast in the nose
        (250.0, 2.96, 2.96),   # under the minimum mass, at the CG (straight up)
        (500.0, 2.955, 3.8),   # in the notch, ballast aft: must climb out over the notch
        (280.0, 3.30, 2.0),    # below and aft of the slanted aft edges
    ],
)
def test_ballast_to_enter_matches_shapely_along_the_path(w, x, s):
    # shapely covers along a dense sampling of the path: outside before, on/inside at the answer
    b = ballast_to_enter(NOTCHED, w, x, s)
    tol = 1e-9 * 0.55
    assert near(NOTCHED, w, x, s, [b], tol)[0]
    before = np.linspace(0.0, b * (1 - 1e-7), 20001)
    assert not covered(NOTCHED, w, x, s, before).any()


def test_ballast_to_enter_raises_when_no_amount_works():
    # by moments the CG only moves towards the ballast station: from forward of the envelope,
    # nose ballast never reaches it; and above the maximum mass nothing helps
    with pytest.raises(SteelyardError, match="no amount"):
        ballast_to_enter(NOTCHED, 400.0, 2.5, 1.0)
    with pytest.raises(SteelyardError, match="maximum"):
        ballast_to_enter(NOTCHED, 700.0, 2.5, 3.0)


@pytest.mark.parametrize(
    "w, x, s",
    [
        (400.0, 2.80, 3.50),
        (400.0, 3.10, 2.00),
        (320.0, 2.93, 2.93),
        (450.0, 2.85, 4.00),  # runs into the notch from the forward lobe
        (350.0, 3.00, 2.10),
    ],
)
def test_payload_remaining_matches_shapely_along_the_path(w, x, s):
    # shapely covers for all three envelopes along a dense sampling of the path: inside all up
    # to the answer, outside one just after it (or the answer is the maximum mass)
    envs = [NOTCHED, TAKEOFF, LANDING]
    max_mass = 640.0
    b = payload_remaining(envs, max_mass, w, x, s)
    assert b > 0
    upto = np.linspace(0.0, b, 20001)
    for env in envs:
        tol = 1e-9 * np.ptp(env[:, 0])
        assert near(env, w, x, s, upto, tol).all()
    if w + b < max_mass * (1 - 1e-12):
        after = b + 1e-6 * (w + b)
        assert not all(covered(env, w, x, s, [after])[0] for env in envs)


def test_payload_remaining_per_envelope_coordinates():
    # two envelopes on different axes: the same added mass moves each CG coordinate by moments
    lateral = np.array([(-0.05, 300.0), (-0.05, 650.0), (0.05, 650.0), (0.05, 300.0)])
    w, x, y, sx, sy = 400.0, 2.9, 0.0, 2.9, 0.5
    b = payload_remaining([TAKEOFF, lateral], None, w, [x, y], [sx, sy])
    # the lateral limit +0.05 m is reached first: w (0.05 - 0) / (0.5 - 0.05) by the formula
    assert b == pytest.approx(400.0 * 0.05 / 0.45, rel=1e-10)


def test_payload_remaining_zero_when_outside():
    # documented: nothing can be added once a limit is broken (shapely: the start is not covered)
    assert not Polygon(TAKEOFF).covers(shapely.Point(2.6, 400.0))
    assert payload_remaining([TAKEOFF], None, 400.0, 2.6, 2.9) == 0.0


# A 0.1 mm sliver and a 0.1 mm slit: features far thinner than any uniform sampling step.
SLIVER = np.array([(3.0, 400.0), (3.0001, 400.0), (3.00005, 650.0)])
SLIT = np.array([(2.7, 300.0), (2.7, 650.0), (3.0, 650.0), (3.0, 400.0), (3.0001, 400.0),
                 (3.0001, 650.0), (3.2, 650.0), (3.2, 300.0)])


def test_ballast_to_enter_finds_a_thin_sliver():
    # shapely: on the sliver at the answer, never covered on a dense sampling before it
    w, x, s = 300.0, 2.5, 3.6
    b = ballast_to_enter(SLIVER, w, x, s)
    assert near(SLIVER, w, x, s, [b], 1e-12)[0]
    assert not covered(SLIVER, w, x, s, np.linspace(0.0, b * (1 - 1e-9), 200001)).any()


def test_payload_remaining_stops_at_a_thin_slit():
    # the path (cg - 3.6) mass = 450 (2.8 - 3.6) meets the slit at x = 3.0 where mass = 600 kg
    # (derived by moments); shapely confirms the point just past it is outside
    w, x, s = 450.0, 2.8, 3.6
    b = payload_remaining([SLIT], None, w, x, s)
    assert b == pytest.approx(600.0 - 450.0, rel=1e-10)
    assert not covered(SLIT, w, x, s, [b + 0.02])[0]
